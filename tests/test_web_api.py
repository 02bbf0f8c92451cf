"""The review workbench's routes through the ASGI test client: every endpoint, the security
rules (token, CSRF, read-only, size limit, escaping, the audit user) and the version check.
Lab books hold sheets simulated with calwork's own simulator (a fictional lab)."""

from __future__ import annotations

import shutil
import threading

import numpy as np
import pytest
from starlette.testclient import TestClient

from calwork.io import load_run_log, read_run_sheet
from calwork.labbook import open_labbook
from calwork.rise import corrected_rise
from calwork.simulation import simulate_scenario
from calwork.web import create_app

#: A sample name that must render as text (the same string the workbook tests use).
HOSTILE = "<img src=x onerror=alert(1)>"


@pytest.fixture(scope="module")
def sheet(tmp_path_factory):
    folder = tmp_path_factory.mktemp("web-sheet")
    simulate_scenario("bomb", folder, runs=3, seed=41)
    path = folder / "runs.csv"
    path.write_text(path.read_text().replace("simulated-sample-A", HOSTILE.replace(",", " ")))
    return path


@pytest.fixture(scope="module")
def base_book(sheet, tmp_path_factory):
    path = tmp_path_factory.mktemp("web-book") / "book.sqlite"
    with open_labbook(path, create=True, user="ana") as book:
        book.add_sheet(sheet)
    return path


@pytest.fixture
def book(base_book, tmp_path):
    path = tmp_path / "book.sqlite"
    shutil.copy(base_book, path)
    return path


@pytest.fixture
def client(book):
    with TestClient(create_app(book, user="ben")) as c:
        c.headers["X-CSRF-Token"] = c.get("/api/session").json()["csrf_token"]
        yield c


def _audit(book):
    with open_labbook(book) as b:
        return b.audit_log()


def test_session_names_the_user_and_gives_a_csrf_token(client):
    data = client.get("/api/session").json()
    assert data["user"] == "ben"
    assert len(data["csrf_token"]) >= 32
    assert data["read_only"] is False


def test_runs_list_with_state_and_warnings(client):
    runs = client.get("/api/runs").json()["runs"]
    assert [r["run"] for r in runs][:3] == ["cal-01", "cal-02", "cal-03"]
    for r in runs:
        assert r["state"] == "recorded"
        assert r["version"] == 1
        assert isinstance(r["warnings"], list)
    assert len(client.get("/api/runs", params={"kind": "calibration"}).json()["runs"]) == 3
    bad = client.get("/api/runs", params={"state": "finished"})
    assert bad.status_code == 400
    assert "state" in bad.json()["error"]


def test_one_run_has_the_contract_keys_and_every_reading(client, sheet):
    data = client.get("/api/runs/cal-02").json()
    for key in ("run", "kind", "sample", "calorimeter", "state", "version",
                "corrected_rise_K", "u_corrected_rise_K", "warnings", "periods", "readings"):
        assert key in data, key
    assert set(data["periods"]) >= {"fore_start_s", "fire_time_s", "main_end_s",
                                    "after_end_s", "source"}
    assert data["periods"]["source"]["main_end_s"] == "detected"
    info = next(i for i in read_run_sheet(sheet) if i.run == "cal-02")
    tg = load_run_log(info)  # the original file, read independently of the lab book
    assert data["readings"]["t_s"] == tg.time_s.tolist()
    assert data["readings"]["T_K"] == tg.temperature_K.tolist()
    missing = client.get("/api/runs/no-such-run")
    assert missing.status_code == 404
    assert "not in the lab book" in missing.json()["error"]


def test_preview_equals_the_rise_engine_on_the_original_log(client, sheet, book):
    stored = client.get("/api/runs/cal-01").json()
    end = stored["periods"]["main_end_s"] + 90.0
    data = client.post("/api/runs/cal-01/preview", json={"main_end_s": end}).json()
    info = next(i for i in read_run_sheet(sheet) if i.run == "cal-01")
    direct = corrected_rise(load_run_log(info), "newton-fit", main_end_s=end)
    assert data["corrected_rise_K"] == pytest.approx(direct.corrected_rise_K, rel=1e-12)
    assert data["u_corrected_rise_K"] == pytest.approx(direct.u_corrected_rise_K, rel=1e-9)
    assert set(data["methods"]) == {"newton-fit", "regnault-pfaundler", "dickinson"}
    # the three methods agree on a dense simulated log within a few of its uncertainties
    values = [m["corrected_rise_K"] for m in data["methods"].values()]
    assert max(values) - min(values) < 3 * data["u_corrected_rise_K"]
    # the same boundary in the log's own notation (minutes with a unit)
    again = client.post("/api/runs/cal-01/preview",
                        json={"main_end_s": f"{end / 60:.10f} min"}).json()
    assert again["corrected_rise_K"] == pytest.approx(data["corrected_rise_K"], rel=1e-9)
    assert again["periods"]["main_end_s"] == pytest.approx(end, abs=1e-6)
    # nothing stored
    assert [e.action for e in _audit(book)] == ["create", "add"]


@pytest.mark.parametrize(("body", "status", "message"), [
    ({"fire_time_s": 1500, "main_end_s": 900}, 400, "must come after"),
    ({"main_end_s": 99999}, 400, "outside the record"),
    ({"method": "guess"}, 400, "unknown rise method"),
    ({"colour": "blue"}, 400, "unknown preview settings"),
    ({"fire_time_s": "later"}, 400, "fire_time_s"),
])
def test_bad_previews_are_clear_4xx(client, book, body, status, message):
    response = client.post("/api/runs/cal-01/preview", json=body)
    assert response.status_code == status
    assert message in response.json()["error"]
    assert [e.action for e in _audit(book)] == ["create", "add"]


def test_amend_is_audited_under_the_server_user_and_checks_the_version(client, book):
    stored = client.get("/api/runs/sample-02").json()
    end = round(stored["periods"]["main_end_s"] + 60.0, 1)
    body = {"set": {"main_end_s": str(end)}, "reason": "end of main period judged later",
            "version": 1, "user": "mallory"}
    response = client.post("/api/runs/sample-02/amend", json=body)
    assert response.status_code == 200, response.text
    assert response.json()["version"] == 2
    last = _audit(book)[-1]
    assert (last.action, last.user, last.reason) == ("amend", "ben",
                                                     "end of main period judged later")
    again = client.post("/api/runs/sample-02/amend", json=body)
    assert again.status_code == 409
    assert "changed since you loaded it" in again.json()["error"]
    after = client.get("/api/runs/sample-02").json()
    assert after["version"] == 2
    assert after["periods"]["main_end_s"] == pytest.approx(end)
    assert after["periods"]["source"]["main_end_s"] == "amended (v2)"
    with open_labbook(book) as b:
        assert b.verify().ok


@pytest.mark.parametrize(("path", "body", "status", "message"), [
    ("/api/runs/cal-01/amend", {"set": {"mass_g": "1.0"}, "version": 1}, 400, "reason"),
    ("/api/runs/cal-01/amend", {"set": {}, "reason": "r", "version": 1}, 400, "cells"),
    ("/api/runs/cal-01/amend", {"set": {"mass_g": "1100"}, "reason": "r", "version": 1}, 400,
     "looks like mg"),
    ("/api/runs/cal-01/amend", {"set": {"mass_g": "1.1"}, "reason": "r"}, 400, "version"),
    ("/api/runs/nope/amend", {"set": {"mass_g": "1.1"}, "reason": "r", "version": 1}, 404,
     "not in the lab book"),
    ("/api/runs/cal-01/void", {}, 400, "reason"),
    ("/api/runs/cal-01/restore", {"reason": "r"}, 400, "not void"),
    ("/api/runs/cal-01/approve", {"version": 3}, 409, "changed since you loaded it"),
])
def test_bad_changes_are_clear_4xx_and_write_nothing(client, book, path, body, status,
                                                    message):
    response = client.post(path, json=body)
    assert response.status_code == status, response.text
    assert message in response.json()["error"]
    assert [e.action for e in _audit(book)] == ["create", "add"]


def test_approve_void_restore(client, book):
    assert client.post("/api/runs/cal-03/approve",
                       json={"version": 1, "note": "checked"}).status_code == 200
    assert client.get("/api/runs/cal-03").json()["state"] == "approved"
    assert client.post("/api/runs/cal-03/void", json={"reason": "misfire"}).status_code == 200
    assert client.get("/api/runs/cal-03").json()["state"] == "void"
    assert client.post("/api/runs/cal-03/restore",
                       json={"reason": "misfire was elsewhere"}).status_code == 200
    assert client.get("/api/runs/cal-03").json()["state"] == "recorded"
    assert [(e.action, e.user) for e in _audit(book)][2:] == [
        ("approve", "ben"), ("void", "ben"), ("restore", "ben")]
    with open_labbook(book) as b:
        assert b.verify().ok


def test_post_without_csrf_is_refused(book):
    with TestClient(create_app(book)) as c:
        for path, body in (("/api/runs/cal-01/void", {"reason": "x"}),
                           ("/api/runs/cal-01/preview", {})):
            response = c.post(path, json=body)
            assert response.status_code == 403
            assert "CSRF" in response.json()["error"]
        wrong = c.post("/api/runs/cal-01/void", json={"reason": "x"},
                       headers={"X-CSRF-Token": "guess"})
        assert wrong.status_code == 403
        form = c.post("/runs/cal-01/void", data={"reason": "x"}, follow_redirects=False)
        assert form.status_code == 403
    assert [e.action for e in _audit(book)] == ["create", "add"]


def test_tokens(book):
    token = "t0k3n-for-ana-0123456789"
    with TestClient(create_app(book, tokens={token: "ana"})) as c:
        assert c.get("/api/runs").status_code == 401
        assert c.get("/api/runs", headers={"Authorization": "Bearer wrong-token-000000"}
                     ).status_code == 401
        page = c.get("/", follow_redirects=False)
        assert page.status_code == 303
        assert page.headers["location"] == "/login"
        auth = {"Authorization": f"Bearer {token}"}
        session = c.get("/api/session", headers=auth).json()
        assert session["user"] == "ana"
        response = c.post("/api/runs/cal-01/void", json={"reason": "leak"},
                          headers={**auth, "X-CSRF-Token": session["csrf_token"]})
        assert response.status_code == 200
        assert _audit(book)[-1].user == "ana"
        login = c.post("/login", data={"token": token}, follow_redirects=False)
        assert login.status_code == 303
        assert "calwork_token" in login.headers["set-cookie"]
        assert "HttpOnly" in login.headers["set-cookie"]
        assert c.get("/").status_code == 200  # the cookie now carries it


def test_read_only_refuses_every_change(book):
    with TestClient(create_app(book, read_only=True)) as c:
        c.headers["X-CSRF-Token"] = c.get("/api/session").json()["csrf_token"]
        for path, body in (("/api/runs/cal-01/void", {"reason": "x"}),
                           ("/api/runs/cal-01/approve", {"version": 1}),
                           ("/api/runs/cal-01/amend", {"set": {"mass_g": "1.1"},
                                                       "reason": "x", "version": 1})):
            response = c.post(path, json=body)
            assert response.status_code == 403, path
            assert "read-only" in response.json()["error"]
        assert c.post("/api/runs/cal-01/preview", json={}).status_code == 200
    assert [e.action for e in _audit(book)] == ["create", "add"]


def test_oversized_request_is_refused(book):
    with TestClient(create_app(book, max_upload_bytes=10_000)) as c:
        token = c.get("/api/session").json()["csrf_token"]
        response = c.post("/import/preview", files={"sheet": ("runs.csv", b"x" * 20_000)},
                          data={"csrf_token": token})
        assert response.status_code == 413


def test_hostile_names_render_as_text(client):
    for url in ("/", "/samples", "/runs/sample-01"):
        html = client.get(url).text
        assert HOSTILE not in html, url
        assert "&lt;img src=x onerror=alert(1)&gt;" in html, url


def test_every_page_renders(client):
    for url in ("/", "/runs/cal-01", "/calibrations", "/calibrations/sim-bomb-1", "/samples",
                "/hess", "/import", "/export", "/?state=recorded&kind=calibration"):
        response = client.get(url)
        assert response.status_code == 200, url
        assert "calwork" in response.text
        assert "pressure vessels" in response.text  # the safety note is on every page
    assert client.get("/runs/nope").status_code == 404
    assert client.get("/calibrations/nope").status_code == 404


def test_calibration_api(client):
    data = client.get("/api/calibrations/sim-bomb-1").json()
    assert [p["run"] for p in data["points"]] == ["cal-01", "cal-02", "cal-03"]
    chart = data["chart"]
    values = [p["energy_equivalent_J_per_K"] for p in data["points"]]
    assert chart["mean"] == pytest.approx(np.mean(values), rel=1e-12)
    assert client.get("/api/calibrations/nope").status_code == 404


def test_network_api_derives_a_target_by_hand(client):
    rows = ("id,equation,delta_r_H_kJ_per_mol,u_delta_r_H_kJ_per_mol\n"
            "a,C2H2(g) + H2(g) = C2H4(g),-170.0,0.5\n"
            "b,C2H4(g) + H2(g) = C2H6(g),-140.0,0.4\n"
            "c,C2H2(g) + 2 H2(g) = C2H6(g),-309.2,0.6\n")
    data = client.post("/api/network", json={"rows": rows,
                                             "targets": ["C2H6(g) = C2H2(g) + 2 H2(g)"]})
    assert data.status_code == 200, data.text
    (target,) = data.json()["targets"]
    # by hand (invented numbers): route a+b = −310.0 ± √(0.5² + 0.4²), route c = −309.2 ± 0.6;
    # their inverse-variance mean, reversed
    u1, u2 = np.hypot(0.5, 0.4), 0.6
    w1, w2 = 1 / u1**2, 1 / u2**2
    assert target["delta_r_H_kJ_per_mol"] == pytest.approx(
        -(w1 * -310.0 + w2 * -309.2) / (w1 + w2), abs=1e-9)
    assert target["u_delta_r_H_kJ_per_mol"] == pytest.approx((w1 + w2) ** -0.5, rel=1e-9)
    assert target["over_determined"] is True
    bad = client.post("/api/network", json={"rows": "id,equation\nx,A(g) = B(g)\n"})
    assert bad.status_code == 400


def test_forms_work_without_javascript(client, book):
    token = client.headers["X-CSRF-Token"]
    plain = TestClient(client.app)
    response = plain.post("/runs/cal-02/amend", data={
        "csrf_token": token, "version": "1", "main_end_s": "1900", "main_end_s__changed": "1",
        "reason": "typed in the form"}, follow_redirects=False)
    assert response.status_code == 303, response.text
    assert _audit(book)[-1].action == "amend"
    response = plain.post("/runs/cal-02/approve", data={
        "csrf_token": token, "version": "1"}, follow_redirects=False)
    assert response.status_code == 409  # the form showed version 1; it is 2 now
    assert "changed since you loaded it" in response.text


def test_import_shows_what_the_importer_sees_then_records(book, tmp_path):
    folder = tmp_path / "new"
    simulate_scenario("bomb", folder, runs=1, seed=43)
    text = (folder / "runs.csv").read_text().replace("cal-01,", "cal-N1,").replace(
        "sample-01,", "sample-N1,")
    with TestClient(create_app(book)) as c:
        token = c.get("/api/session").json()["csrf_token"]
        files = [("sheet", ("../../escape.csv", text.encode())),
                 *[("logs", (p.name, p.read_bytes())) for p in sorted(folder.glob("*-01.csv"))]]
        response = c.post("/import/preview", files=files, data={"csrf_token": token})
        assert response.status_code == 200, response.text
        assert "cal-N1" in response.text
        assert "Record in the lab book" in response.text
        assert not (tmp_path / "escape.csv").exists()
        staged = response.text.split('name="staged" value="')[1].split('"')[0]
        recorded = c.post("/import/record", data={"csrf_token": token, "staged": staged},
                          follow_redirects=False)
        assert recorded.status_code == 303
    with open_labbook(book) as b:
        assert {"cal-N1", "sample-N1"} <= {r["run"] for r in b.runs()}
        assert b.verify().ok


def test_two_browsers_amending_different_runs_at_once_both_succeed(client, book):
    results = {}

    def amend(run, cells):
        c = TestClient(client.app)
        c.headers["X-CSRF-Token"] = client.headers["X-CSRF-Token"]
        results[run] = c.post(f"/api/runs/{run}/amend", json={
            "set": cells, "reason": "parallel review", "version": 1})

    threads = [threading.Thread(target=amend, args=("cal-01", {"fuse_burnt_cm": "7.5"})),
               threading.Thread(target=amend, args=("cal-02", {"ignition_J": "1.2"}))]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert {r: v.status_code for r, v in results.items()} == {"cal-01": 200, "cal-02": 200}
    with open_labbook(book) as b:
        states = b.states(["cal-01", "cal-02"])
        assert states["cal-01"].overrides == {"fuse_burnt_cm": "7.5"}
        assert states["cal-02"].overrides == {"ignition_J": "1.2"}
        assert b.verify().ok
        assert b.recompute().agree


def test_export_downloads(client):
    xlsx = client.get("/export/workbook.xlsx")
    assert xlsx.status_code == 200
    assert xlsx.content[:2] == b"PK"
    html = client.get("/export/report.html", params={"calorimeter": "sim-bomb-1"})
    assert html.status_code == 200
    assert b"Review state" in html.content
    assert client.get("/export/other.doc").status_code == 400


def test_hess_page_solves_a_loaded_file(client):
    token = client.headers["X-CSRF-Token"]
    rows = ("id,equation,delta_r_H_kJ_per_mol,u_delta_r_H_kJ_per_mol\n"
            "a,C2H2(g) + H2(g) = C2H4(g),-170.0,0.5\n")
    page = TestClient(client.app).post(
        "/hess", data={"csrf_token": token, "targets": "C2H4(g) = C2H2(g) + H2(g)"},
        files={"network_file": ("mine.csv", rows.encode())})
    assert page.status_code == 200
    assert "170.000" in page.text  # the reversed row: ΔrH = +170.000 kJ/mol
    assert "mine.csv" in page.text


def test_serve_off_loopback_needs_a_token(book):
    import json
    import os
    import socket
    import subprocess
    import sys
    import time
    import urllib.error
    import urllib.request

    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    proc = subprocess.Popen(
        [sys.executable, "-m", "calwork.cli.main", "serve", "--labbook", str(book),
         "--host", "0.0.0.0", "--port", str(port)],
        stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
        env={**os.environ, "CALWORK_USER": "ana"})
    try:
        first = proc.stdout.readline()
        assert first.startswith("access token for ana: ")
        token = first.split(": ", 1)[1].split()[0]
        url = f"http://127.0.0.1:{port}/api/runs"

        def get(headers):
            request = urllib.request.Request(url, headers=headers)
            try:
                with urllib.request.urlopen(request, timeout=5) as response:
                    return response.status, json.loads(response.read())
            except urllib.error.HTTPError as exc:
                return exc.code, json.loads(exc.read())

        deadline = time.monotonic() + 20
        while True:
            try:
                status, _ = get({})
                break
            except (urllib.error.URLError, ConnectionError):
                assert time.monotonic() < deadline, "the server did not start"
                time.sleep(0.1)
        assert status == 401
        status, body = get({"Authorization": f"Bearer {token}"})
        assert status == 200
        assert len(body["runs"]) == 6
    finally:
        proc.terminate()
        proc.communicate(timeout=10)  # also closes the pipes


def test_serve_refuses_a_short_token(book, capsys):
    from calwork.cli.main import main

    code = main(["serve", "--labbook", str(book), "--token", "short"])
    err = capsys.readouterr().err
    assert code == 2
    assert "at least 16 characters" in err


def test_a_multi_event_log_lists_its_events_and_previews_each(tmp_path):
    folder = tmp_path / "solution"
    simulate_scenario("solution", folder, runs=1, seed=45)
    book = tmp_path / "sol.sqlite"
    with open_labbook(book, create=True, user="ana") as b:
        b.add_sheet(folder / "runs.csv")
    with TestClient(create_app(book)) as c:
        c.headers["X-CSRF-Token"] = c.get("/api/session").json()["csrf_token"]
        run = c.get("/api/runs").json()["runs"][0]
        data = c.get(f"/api/runs/{run['run']}").json()
        kinds = [e["kind"] for e in data["events"]]
        assert kinds == ["heater", "event", "heater"]  # calibration, dissolution, calibration
        rises = {}
        for event in data["events"]:
            response = c.post(f"/api/runs/{run['run']}/preview", json={"event": event["index"]})
            assert response.status_code == 200, response.text
            rises[event["index"]] = response.json()["corrected_rise_K"]
        # heating by the two electrical calibrations, cooling by the endothermic dissolution
        assert rises[1] > 0
        assert rises[3] > 0
        assert rises[2] == pytest.approx(run["corrected_rise_K"],
                                         abs=3 * data["u_corrected_rise_K"])
        assert "heat event" in c.get(f"/runs/{run['run']}").text


#: The injection strings the report and workbook tests use.
INJECTIONS = ('<script>alert("x")</script>=HYPERLINK("http://example.invalid","x")',
              "<img src=x onerror=alert(1)>")


def test_the_report_tests_injection_strings_render_as_text(tmp_path):
    import csv

    folder = tmp_path / "hostile"
    simulate_scenario("bomb", folder, runs=1, seed=47)
    sheet = folder / "runs.csv"
    with sheet.open(newline="") as fh:
        rows = list(csv.DictReader(fh))
    for row in rows:
        if row["kind"] == "combustion":
            row["sample"] = INJECTIONS[0]
        row["notes"] = INJECTIONS[1]
    with sheet.open("w", newline="") as fh:
        writer = csv.DictWriter(fh, fieldnames=list(rows[0]))
        writer.writeheader()
        writer.writerows(rows)
    book = tmp_path / "hostile.sqlite"
    with open_labbook(book, create=True, user="ana") as b:
        b.add_sheet(sheet)
    with TestClient(create_app(book)) as c:
        c.headers["X-CSRF-Token"] = c.get("/api/session").json()["csrf_token"]
        assert c.post("/api/runs/sample-01/amend", json={
            "set": {"fuse_burnt_cm": "7.5"}, "reason": INJECTIONS[0], "version": 1,
        }).status_code == 200
        for url in ("/", "/samples", "/runs/sample-01", "/runs/cal-01"):
            html = c.get(url).text
            for text in INJECTIONS:
                assert text not in html, (url, text)
            assert "&lt;script&gt;alert(" in html or "&lt;img src=x" in html, url
            assert "<script>alert" not in html, url


def test_on_loopback_only_the_loopback_names_are_served(book):
    app = create_app(book, allowed_hosts=["127.0.0.1", "localhost"])
    with TestClient(app, base_url="http://127.0.0.1:8765") as c:
        assert c.get("/api/session").status_code == 200
    with TestClient(app, base_url="http://attacker.example:8765") as c:
        assert c.get("/api/session").status_code == 400  # a rebound name is refused
