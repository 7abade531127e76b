// ringdrag workbench: fills in a design, asks the service for numbers and plots, shows them.
// Plain browser JavaScript, no libraries. Lengths are typed in millimetres and sent in metres.
"use strict";

const $ = (id) => document.getElementById(id);
const MM = 0.001;

/** The service's address: the field's value, or this page's own origin. */
function base() {
  const typed = $("base").value.trim().replace(/\/+$/, "");
  return typed || window.location.origin;
}

/** Request headers; the API key, when given, as the bearer token the service expects. */
function headers(accept, withBody) {
  const h = { accept };
  if (withBody) h["content-type"] = "application/json";
  const key = $("api-key").value.trim();
  if (key) h.authorization = "Bearer " + key;
  return h;
}

/** Three significant figures, without trailing zeros. */
function figure(v) {
  if (v === null || v === undefined || !Number.isFinite(v)) return "none";
  if (v === 0) return "0";
  const a = Math.abs(v);
  if (a >= 1e5 || a < 1e-4) return v.toExponential(2);
  return String(Number(v.toPrecision(3)));
}

function number(id, scale = 1) {
  const v = Number($(id).value);
  return v * scale;
}

/** The design object of the HTTP contract, from the form. */
function design() {
  return {
    magnets: {
      grade: $("grade").value,
      outer_diameter_m: number("magnet-od", MM),
      inner_diameter_m: number("magnet-id", MM),
      length_m: number("magnet-length", MM),
      count: Math.round(number("magnet-count")),
      polarity: $("polarity").value,
    },
    tube: {
      material: $("material").value,
      inner_diameter_m: number("tube-id", MM),
      wall_thickness_m: number("tube-wall", MM),
      length_m: number("tube-length", MM),
    },
    load: {
      payload_mass_kg: number("payload"),
      incline_deg: number("incline"),
    },
  };
}

function status(text, isError = false) {
  const s = $("status");
  s.textContent = text;
  s.className = isError ? "error" : "";
}

function clearFieldErrors() {
  document.querySelectorAll("[aria-invalid]").forEach((el) => el.removeAttribute("aria-invalid"));
  document.querySelectorAll(".field-error").forEach((el) => el.remove());
}

/** Shows a problem document: its detail, and each field's message beside the field. */
function showProblem(problem, httpStatus) {
  let text = problem && problem.detail ? problem.detail : "The service answered " + httpStatus + ".";
  if (httpStatus === 401) text += " Fill in the API key.";
  status(text, true);
  for (const e of (problem && problem.errors) || []) {
    const field = document.querySelector(`[data-path="${e.path}"]`);
    if (!field) continue;
    field.setAttribute("aria-invalid", "true");
    const note = document.createElement("span");
    note.className = "field-error";
    note.textContent = e.message;
    field.insertAdjacentElement("afterend", note);
  }
}

/** POSTs `body` as JSON; the parsed answer, or null after showing the problem. */
async function postJson(path, body) {
  let response;
  try {
    response = await fetch(base() + path, {
      method: "POST",
      headers: headers("application/json", true),
      body: JSON.stringify(body),
    });
  } catch (err) {
    status("Cannot reach the service at " + base() + " (" + err.message + "). A page on another origin needs the service's CORS setting.", true);
    return null;
  }
  const answer = await response.json().catch(() => null);
  if (!response.ok) {
    showProblem(answer, response.status);
    return null;
  }
  return answer;
}

/** POSTs `body` asking for the SVG plot, sized for `figureEl`, and shows it there. */
async function drawPlot(path, body, figureEl, query) {
  const width = Math.max(320, Math.min(2400, Math.round(figureEl.clientWidth || 640)));
  const url = `${base()}${path}?width_px=${width}${query || ""}`;
  const response = await fetch(url, {
    method: "POST",
    headers: headers("image/svg+xml", true),
    body: JSON.stringify(body),
  });
  if (!response.ok) {
    showProblem(await response.json().catch(() => null), response.status);
    return;
  }
  const svg = await response.blob();
  const img = new Image();
  img.alt = "plot drawn by the service";
  await new Promise((resolve, reject) => {
    img.onload = resolve;
    img.onerror = () => reject(new Error("the plot did not load"));
    img.src = URL.createObjectURL(svg);
  });
  figureEl.replaceChildren(img);
  figureEl.dataset.drawn = "true";
}

function showFigures(card, values) {
  for (const [name, value] of Object.entries(values)) {
    const el = $(card).querySelector(`[data-figure="${name}"]`);
    if (el) el.textContent = figure(value);
  }
}

function showCautions(list) {
  const ul = $("cautions");
  ul.replaceChildren(...list.map((c) => {
    const li = document.createElement("li");
    li.textContent = c;
    return li;
  }));
}

async function busy(button, work) {
  document.querySelectorAll(".actions button").forEach((b) => (b.disabled = true));
  clearFieldErrors();
  status("Computing…");
  try {
    await work();
  } catch (err) {
    status(err.message, true);
  } finally {
    document.querySelectorAll(".actions button").forEach((b) => (b.disabled = false));
  }
}

async function runCurve() {
  const body = { design: design() };
  const curve = await postJson("/v1/force-curve", body);
  if (!curve) return;
  showFigures("curve-card", curve);
  showCautions(curve.cautions);
  await drawPlot("/v1/force-curve", body, $("curve-plot"));
  status("Force curve computed.");
}

async function runStroke() {
  const body = { design: design(), start: { position_m: -0.03, speed_m_per_s: 0 }, samples: 300 };
  const stroke = await postJson("/v1/simulate", body);
  if (!stroke) return;
  showFigures("stroke-card", stroke.summary);
  showCautions(stroke.cautions);
  await drawPlot("/v1/simulate", body, $("stroke-plot"));
  status("Stroke simulated: released 30 mm before the tube, at rest.");
}

async function runSize() {
  const option = $("size-field").selectedOptions[0];
  const scale = Number(option.dataset.scale);
  const body = {
    design: design(),
    vary: { path: option.value, min: Number(option.dataset.min) * scale, max: Number(option.dataset.max) * scale },
    target: { max_terminal_speed_m_per_s: number("size-speed") },
    safety_factor: number("size-factor"),
    hot_temperature_c: number("size-hot"),
  };
  const sized = await postJson("/v1/size", body);
  if (!sized) return;
  const unit = scale === MM ? " mm" : "";
  const shown = (v) => (v === null ? "none" : figure(v / scale) + unit);
  $("size-answer").textContent = sized.feasible
    ? `Smallest ${option.textContent.replace(/ \(mm\)$/, "")} meeting the limit with the safety factor, cold and hot: ${shown(sized.value)} (margin ${figure(sized.margin)}).`
    : `No value in the range meets the limit; the closest is ${shown(sized.best_value)}.`;
  $("size-answer").dataset.value = sized.value === null ? "" : String(sized.value);
  showCautions(sized.cautions);
  status("Sizing done.");
}

/** Fills the material and grade lists from the service's own table. */
async function loadMaterials() {
  let response;
  try {
    response = await fetch(base() + "/v1/materials", { headers: headers("application/json", false) });
  } catch (err) {
    status("Cannot reach the service at " + base() + ".", true);
    return;
  }
  if (!response.ok) {
    showProblem(await response.json().catch(() => null), response.status);
    return;
  }
  const tables = await response.json();
  const fill = (select, rows, label, chosen) => {
    select.replaceChildren(...rows.map((r) => {
      const o = document.createElement("option");
      o.value = r.id;
      o.textContent = label(r);
      o.title = r.provenance || "";
      o.selected = r.id === chosen;
      return o;
    }));
  };
  fill($("material"), tables.conductors, (r) => `${r.name} (${figure(r.iacs_percent)} %IACS)`, "copper-c12200");
  fill($("grade"), tables.magnet_grades, (r) => `${r.id} (${figure(r.remanence_t)} T)`, "N42");
  document.body.dataset.materials = "loaded";
  status("Material table loaded: " + tables.conductors.length + " conductors, " + tables.magnet_grades.length + " grades.");
}

$("run-curve").addEventListener("click", (e) => busy(e.target, runCurve));
$("run-stroke").addEventListener("click", (e) => busy(e.target, runStroke));
$("run-size").addEventListener("click", (e) => busy(e.target, runSize));
$("api-key").addEventListener("change", loadMaterials);
$("base").addEventListener("change", loadMaterials);
loadMaterials();
