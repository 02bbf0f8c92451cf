/* calwork review bench: charts, draggable period boundaries and the live preview.
   The pages work without this file; it only adds interaction. */
"use strict";

const ZERO_C = 273.15;
const BOUNDARY_NAMES = ["fore_start_s", "fire_time_s", "main_end_s", "after_end_s"];
const BOUNDARY_LABELS = {fore_start_s: "fore start", fire_time_s: "firing",
                         main_end_s: "end of main", after_end_s: "after end"};

function csrfToken() {
  const meta = document.querySelector('meta[name="csrf-token"]');
  return meta ? meta.content : "";
}

async function postJSON(url, body) {
  const response = await fetch(url, {
    method: "POST", credentials: "same-origin",
    headers: {"Content-Type": "application/json", "X-CSRF-Token": csrfToken()},
    body: JSON.stringify(body),
  });
  const data = await response.json().catch(() => ({error: response.statusText}));
  if (!response.ok) { throw new Error(data.error || response.statusText); }
  return data;
}

function el(tag, attrs, ...children) {
  const node = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs || {})) { node.setAttribute(k, v); }
  for (const child of children) {
    node.append(child instanceof Node ? child : document.createTextNode(String(child)));
  }
  return node;
}

function fmt(value, digits) {
  if (value === null || value === undefined || Number.isNaN(value)) { return ""; }
  return Number(value).toPrecision(digits || 6);
}

/* ---- run page ------------------------------------------------------------------------- */
function runPage(data) {
  const chart = document.getElementById("chart");
  const form = document.getElementById("amend-form");
  if (!chart || !data.display || typeof Plotly === "undefined") { return; }
  const t = data.display.t_s;
  const T = data.display.T_K.map((v) => v - ZERO_C);
  const inputs = {};
  for (const name of BOUNDARY_NAMES) {
    inputs[name] = form.querySelector(`input[data-boundary="${name}"]`);
  }
  const state = {bounds: {}, fore: data.periods.fore_period_s, after: data.periods.after_period_s};
  for (const name of BOUNDARY_NAMES) {
    const v = data.periods[name];
    state.bounds[name] = (v === null || v === undefined) ? null : Number(v);
  }
  const tmin = t[0], tmax = t[t.length - 1];

  function shapes() {
    const b = state.bounds;
    const out = [];
    const shade = (x0, x1, color) => out.push({type: "rect", xref: "x", yref: "paper",
      x0: x0, x1: x1, y0: 0, y1: 1, fillcolor: color, line: {width: 0}, layer: "below"});
    if (state.fore) { shade(state.fore[0], state.fore[1], "rgba(110,140,160,0.18)"); }
    if (b.fire_time_s !== null && b.main_end_s !== null) {
      shade(b.fire_time_s, b.main_end_s, "rgba(181,101,42,0.16)");
    }
    if (state.after) { shade(state.after[0], state.after[1], "rgba(120,150,110,0.18)"); }
    const first = out.length;
    for (const name of BOUNDARY_NAMES) {
      const x = b[name] === null ? (name === "fore_start_s" ? tmin : name === "after_end_s" ? tmax : null) : b[name];
      if (x === null) { continue; }
      out.push({type: "line", xref: "x", yref: "paper", x0: x, x1: x, y0: 0, y1: 1,
                name: name, line: {color: "#23333d", width: 2,
                dash: name.endsWith("_start_s") || name.startsWith("after_end") ? "dot" : "solid"}});
    }
    state.firstLine = first;
    return out;
  }

  function annotations() {
    return BOUNDARY_NAMES.filter((n) => state.bounds[n] !== null).map((n) => ({
      x: state.bounds[n], y: 1.0, yref: "paper", text: BOUNDARY_LABELS[n], showarrow: false,
      yanchor: "bottom", font: {size: 11}}));
  }

  const layout = {
    margin: {l: 70, r: 20, t: 28, b: 50}, showlegend: false,
    xaxis: {title: {text: "time / s (" + (data.time_origin || "") .slice(0, 60) + ")"}},
    yaxis: {title: {text: "temperature / °C"}},
    shapes: shapes(), annotations: annotations(), dragmode: "zoom",
  };
  Plotly.newPlot(chart, [{x: t, y: T, mode: "lines", line: {color: "#23333d", width: 1.3},
                          name: "readings", hovertemplate: "%{x:.1f} s, %{y:.4f} °C"}],
                 layout, {responsive: true, edits: {shapePosition: true},
                          displaylogo: false});

  function redraw() {
    Plotly.relayout(chart, {shapes: shapes(), annotations: annotations()});
  }

  function setBoundary(name, x, fromChart) {
    state.bounds[name] = x;
    if (fromChart) {
      inputs[name].value = x === null ? "" : x.toFixed(1);
    }
    const box = form.querySelector(`input[name="${name}__changed"]`);
    if (box) { box.checked = true; }
  }

  chart.on("plotly_relayout", (ev) => {
    let moved = false;
    for (const key of Object.keys(ev)) {
      const m = /^shapes\[(\d+)\]\.x0$/.exec(key);
      if (!m) { continue; }
      const index = Number(m[1]);
      const shape = chart.layout.shapes[index];
      if (!shape || shape.type !== "line" || !shape.name) { redraw(); return; }
      const x = Math.min(Math.max(Number(ev[key]), tmin), tmax);
      setBoundary(shape.name, x, true);
      moved = true;
    }
    if (moved) { redraw(); schedulePreview(); }
  });

  for (const name of BOUNDARY_NAMES) {
    inputs[name].addEventListener("change", () => {
      const text = inputs[name].value.trim();
      const number = Number(text);
      setBoundary(name, text === "" ? null : (Number.isFinite(number) ? number : state.bounds[name]), false);
      redraw();
      schedulePreview();
    });
  }
  const method = document.getElementById("b-method");
  if (method) { method.addEventListener("change", schedulePreview); }
  const eventBox = document.getElementById("b-event");
  if (eventBox) { eventBox.addEventListener("change", schedulePreview); }
  document.getElementById("preview-button").addEventListener("click", () => preview());

  let timer = null;
  function schedulePreview() {
    clearTimeout(timer);
    timer = setTimeout(preview, 150);
  }

  async function preview() {
    const body = {};
    for (const name of BOUNDARY_NAMES) {
      const box = form.querySelector(`input[name="${name}__changed"]`);
      if (box && box.checked) { body[name] = inputs[name].value.trim(); }
    }
    if (method) { body.method = method.value; }
    if (eventBox) { body.event = eventBox.value; }
    const panel = document.getElementById("preview");
    panel.setAttribute("aria-busy", "true");
    try {
      const result = await postJSON(`/api/runs/${encodeURIComponent(data.run)}/preview`, body);
      showPreview(panel, result);
      state.fore = result.periods.fore_period_s;
      state.after = result.periods.after_period_s;
      if (state.bounds.fire_time_s === null || !form.querySelector('input[name="fire_time_s__changed"]').checked) {
        state.bounds.fire_time_s = result.periods.fire_time_s;
      }
      if (!form.querySelector('input[name="main_end_s__changed"]').checked) {
        state.bounds.main_end_s = result.periods.main_end_s;
      }
      redraw();
    } catch (err) {
      panel.replaceChildren(el("p", {class: "error-box"}, err.message));
    } finally {
      panel.removeAttribute("aria-busy");
    }
  }

  function showPreview(panel, result) {
    const rows = Object.entries(result.methods).map(([name, r]) => el("tr", {},
      el("th", {}, name), el("td", {class: "num"}, r.error ? "failed" : fmt(r.corrected_rise_K, 8)),
      el("td", {class: "num"}, r.error ? r.error : fmt(r.u_corrected_rise_K * 1000, 3) + " mK")));
    panel.replaceChildren(
      el("p", {class: "preview-value", id: "preview-rise"},
         `ΔT_c = ${fmt(result.corrected_rise_K, 8)} K ± ${fmt(result.u_corrected_rise_K * 1000, 3)} mK`),
      el("p", {class: "note"}, `${result.method}; firing ${fmt(result.periods.fire_time_s, 6)} s (${result.periods.fire_source}), end of main period ${fmt(result.periods.main_end_s, 6)} s (${result.periods.main_end_source}); not stored`),
      el("table", {class: "kv"}, el("thead", {}, el("tr", {}, el("th", {}, "method"),
         el("th", {class: "num"}, "ΔT_c / K"), el("th", {class: "num"}, "u"))), el("tbody", {}, ...rows)),
      ...result.warnings.map((w) => el("p", {class: "warn-line"}, w)));
    const res = document.getElementById("residuals");
    const r = result.residuals || {};
    const traces = [];
    if (r.fore_t_s) { traces.push({x: r.fore_t_s, y: r.fore_K.map((v) => v * 1000), mode: "markers", name: "fore period", marker: {size: 3, color: "#4c6a7c"}}); }
    if (r.after_t_s) { traces.push({x: r.after_t_s, y: r.after_K.map((v) => v * 1000), mode: "markers", name: "after period", marker: {size: 3, color: "#6d8a5f", symbol: "diamond"}}); }
    if (res && traces.length) {
      Plotly.react(res, traces, {margin: {l: 70, r: 20, t: 10, b: 40}, showlegend: true,
        legend: {orientation: "h", y: -0.3}, xaxis: {title: {text: "time / s"}},
        yaxis: {title: {text: "residual / mK"}}}, {displaylogo: false, responsive: true});
    }
  }

  // the form stores what the reviewer changed: mark boxes of typed values too
  form.addEventListener("submit", () => {
    for (const name of BOUNDARY_NAMES) {
      const original = data.periods[name];
      const now = inputs[name].value.trim();
      const box = form.querySelector(`input[name="${name}__changed"]`);
      if (box && !box.checked && now !== "" && Number(now) !== Number(original)) { box.checked = true; }
    }
  });
  preview();
}

/* ---- calibration page ------------------------------------------------------------------ */
function qaPage(data) {
  const div = document.getElementById("qa-chart");
  if (!div || !data.chart || typeof Plotly === "undefined") { return; }
  const pts = data.chart.points;
  const dated = pts.every((p) => p.date);
  const x = pts.map((p, i) => (dated ? p.date : i + 1));
  const traces = [{x: x, y: pts.map((p) => p.value), mode: "lines+markers", name: "ε (active runs)",
                   customdata: pts.map((p) => p.run), marker: {size: 8, color: "#23333d"},
                   line: {color: "#9aa4aa", width: 1},
                   hovertemplate: "%{customdata}: %{y:.2f} J/K<extra></extra>"}];
  if (data.void_points && data.void_points.length) {
    traces.push({x: data.void_points.map((p, i) => (dated && p.date ? p.date : pts.length + i + 1)),
                 y: data.void_points.map((p) => p.energy_equivalent_J_per_K), mode: "markers",
                 name: "void runs (not in the limits)", customdata: data.void_points.map((p) => p.run),
                 marker: {size: 9, symbol: "circle-open", color: "#23333d"},
                 hovertemplate: "%{customdata} (void): %{y:.2f} J/K<extra></extra>"});
  }
  const c = data.chart;
  const hline = (y, dash, label) => ({type: "line", xref: "paper", x0: 0, x1: 1, y0: y, y1: y,
                                      line: {dash: dash, width: 1.2, color: "#b5652a"}});
  const shapes = [hline(c.mean, "solid")];
  if (c.warning_limits) { shapes.push(hline(c.warning_limits[0], "dash"), hline(c.warning_limits[1], "dash")); }
  if (c.action_limits) { shapes.push(hline(c.action_limits[0], "dot"), hline(c.action_limits[1], "dot")); }
  Plotly.newPlot(div, traces, {margin: {l: 80, r: 20, t: 10, b: 60}, shapes: shapes,
    legend: {orientation: "h", y: -0.25},
    xaxis: dated ? {title: {text: "date"}, type: "date", tickformat: "%Y-%m-%d"}
                 : {title: {text: "run in order"}, dtick: 1},
    yaxis: {title: {text: "ε / (J/K)"}, tickformat: ".1f"}}, {displaylogo: false, responsive: true});
  div.on("plotly_click", (ev) => {
    const run = ev.points && ev.points[0] && ev.points[0].customdata;
    if (run) { window.location.href = "/runs/" + encodeURIComponent(run); }
  });
}

/* ---- samples page ---------------------------------------------------------------------- */
function budgetCharts() {
  if (typeof Plotly === "undefined") { return; }
  for (const div of document.querySelectorAll(".budget-chart")) {
    const parts = JSON.parse(div.dataset.budget);
    Plotly.newPlot(div, [{type: "bar", orientation: "h", x: parts.map((p) => p[1]),
                          y: parts.map((p) => p[0]), marker: {color: "#b5652a"}}],
                   {margin: {l: 170, r: 20, t: 10, b: 40},
                    xaxis: {title: {text: "standard uncertainty / " + div.dataset.unit}}},
                   {displaylogo: false, responsive: true});
  }
}

document.addEventListener("DOMContentLoaded", () => {
  const runData = document.getElementById("run-data");
  if (runData) { runPage(JSON.parse(runData.textContent)); }
  const qaData = document.getElementById("qa-data");
  if (qaData) { qaPage(JSON.parse(qaData.textContent)); }
  budgetCharts();
});
