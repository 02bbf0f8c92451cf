"""Golden outputs: the numbers of ``calwork reduce --json`` (each rise method), ``calwork demo
--json``, ``calwork network --json`` and ``calwork cycle --json`` on the bundled, simulated
sample runs, kept in ``tests/golden/outputs.json``.

This is a regression guard for restructuring, not a check of the physics (those tests name
their outside sources): it holds the numbers that a change of code layout must leave as they
are, to 1e-12 relative. A change that is meant to change the numbers (a physics fix) updates the
file on purpose, with the reason in the commit message:

    python tests/test_golden_outputs.py --write
"""

from __future__ import annotations

import io
import json
import math
import sys
from contextlib import redirect_stdout
from pathlib import Path

import pytest

GOLDEN = Path(__file__).parent / "golden" / "outputs.json"
REL = 1e-12
#: Keys whose values depend on the machine, the install or the clock, not on the numbers.
VOLATILE = {"calwork_version", "version", "created", "created_utc", "timestamp", "python",
            "platform"}

COMMANDS = {
    "reduce/newton-fit": ["reduce", "--json", "{runs}/runs.csv"],
    "reduce/dickinson": ["reduce", "--json", "--method", "dickinson", "{runs}/runs.csv"],
    "reduce/regnault-pfaundler": ["reduce", "--json", "--method", "regnault-pfaundler",
                                  "{runs}/runs.csv"],
    "demo": ["demo", "--json", "--no-plots", "--out", "{tmp}/demo"],
    "network": ["network", "--json", "{runs}/network.csv"],
    "cycle": ["cycle", "--json", "{runs}/kcl_cycle.toml"],
}


def _normalise(value, folders: dict[str, str]):
    if isinstance(value, dict):
        return {k: ("<volatile>" if k in VOLATILE else _normalise(v, folders))
                for k, v in value.items()}
    if isinstance(value, list):
        return [_normalise(v, folders) for v in value]
    if isinstance(value, str):
        for real, label in folders.items():
            value = value.replace(real, label)
        return value
    return value


def collect(tmp: Path) -> dict:
    """Run every command on a fresh copy of the sample runs; their JSON, normalised."""
    from calwork.cli.main import main

    sys.path.insert(0, str(Path(__file__).parent))
    from importlib import resources

    from conftest import copy_sample_runs

    runs = copy_sample_runs(tmp / "runs")
    with resources.as_file(resources.files("calwork.sample_runs")) as bundled:
        folders = {str(runs): "<runs>", str(tmp): "<tmp>", str(bundled): "<bundled-runs>"}
    out = {}
    for name, argv in COMMANDS.items():
        args = [a.format(runs=runs, tmp=tmp) for a in argv]
        buffer = io.StringIO()
        with redirect_stdout(buffer):
            status = main(args)
        assert status == 0, (name, status)
        out[name] = _normalise(json.loads(buffer.getvalue()), folders)
    return out


def _compare(expected, found, where: str, problems: list[str]) -> None:
    if len(problems) > 20:
        return
    if isinstance(expected, dict) and isinstance(found, dict):
        for key in sorted(set(expected) | set(found)):
            if key not in expected or key not in found:
                problems.append(f"{where}/{key}: only in {'golden' if key in expected else 'new'}")
            else:
                _compare(expected[key], found[key], f"{where}/{key}", problems)
    elif isinstance(expected, list) and isinstance(found, list):
        if len(expected) != len(found):
            problems.append(f"{where}: {len(expected)} items in golden, {len(found)} now")
        for i, (a, b) in enumerate(zip(expected, found, strict=False)):
            _compare(a, b, f"{where}[{i}]", problems)
    elif (isinstance(expected, float | int) and isinstance(found, float | int)
          and not isinstance(expected, bool) and not isinstance(found, bool)):
        if not math.isclose(expected, found, rel_tol=REL, abs_tol=1e-300):
            problems.append(f"{where}: {expected!r} in golden, {found!r} now")
    elif expected != found:
        problems.append(f"{where}: {str(expected)[:80]!r} in golden, {str(found)[:80]!r} now")


@pytest.mark.slow
def test_outputs_match_golden(tmp_path):
    expected = json.loads(GOLDEN.read_text(encoding="utf-8"))
    found = collect(tmp_path)
    problems: list[str] = []
    _compare(expected, found, "", problems)
    assert not problems, "\n".join(problems)


if __name__ == "__main__":
    import tempfile

    if sys.argv[1:] != ["--write"]:
        sys.exit("usage: python tests/test_golden_outputs.py --write")
    with tempfile.TemporaryDirectory() as folder:
        data = collect(Path(folder))
    GOLDEN.write_text(json.dumps(data, indent=1, sort_keys=True) + "\n", encoding="utf-8")
    print(f"wrote {GOLDEN}")
