// shockpath's page: plain JavaScript, no library, no network beyond this service.
"use strict";

const $ = (id) => document.getElementById(id);
const state = { request: null, objectUrls: [], endpoint: "/v1/paths", endpoints: {} };
const MAIN_VALUE = { price_ceiling: ["level", "growth"], price_floor: ["level"], quantity_cap: ["level"],
  unit_tax: ["amount"], unit_subsidy: ["amount"], ad_valorem_tax: ["rate"], none: [] };
const SHOCK_VALUE = { step: "change", ramp: "change", growth: "rate", path: null };

function getAt(obj, pointer) {
  return pointer.split("/").slice(1).reduce((o, k) => (o == null ? undefined : o[k.replace(/~1/g, "/").replace(/~0/g, "~")]), obj);
}

function setAt(obj, pointer, value) {
  const keys = pointer.split("/").slice(1).map((k) => k.replace(/~1/g, "/").replace(/~0/g, "~"));
  let o = obj;
  for (const k of keys.slice(0, -1)) { if (o[k] == null) o[k] = {}; o = o[k]; }
  o[keys[keys.length - 1]] = value;
}

function asNumber(text) {
  const trimmed = text.trim();
  if (trimmed === "") return undefined;
  const n = Number(trimmed);
  return Number.isFinite(n) ? n : trimmed;  // a non-number goes through, for the server to point at
}

function field(id, label, pointer, value) {
  const wrap = document.createElement("div");
  wrap.className = "field";
  const l = document.createElement("label");
  l.htmlFor = id;
  l.textContent = label;
  const input = document.createElement("input");
  input.id = id;
  input.dataset.pointer = pointer;
  input.inputMode = "decimal";
  input.value = value == null ? "" : String(value);
  wrap.append(l, input);
  return wrap;
}

function renderForm(request) {
  for (const input of document.querySelectorAll("#scenario-form input[data-pointer]")) {
    if (input.closest("#shock-fields, #policy-fields")) continue;
    const v = getAt(request, input.dataset.pointer);
    input.value = v == null || typeof v === "object" ? "" : String(v);
    input.disabled = typeof v === "object" && v !== null;
  }
  const shocks = $("shock-fields");
  shocks.replaceChildren();
  (request.shocks || []).forEach((s, i) => {
    const key = SHOCK_VALUE[s.profile];
    if (key) shocks.append(field(`s-${i}`, `${s.shifter} (${s.profile}) ${key}`, `/shocks/${i}/${key}`, s[key]));
  });
  if (!shocks.children.length) shocks.textContent = "No shock the form can edit; see the whole request.";
  const policies = $("policy-fields");
  policies.replaceChildren();
  (request.policies || []).forEach((p, i) => {
    const key = (MAIN_VALUE[p.kind] || []).find((k) => k in p);
    if (key && p[key] !== "base") {
      policies.append(field(`p-${i}`, `${p.name}: ${p.kind.replace(/_/g, " ")} ${key}`, `/policies/${i}/${key}`, p[key]));
    } else {
      const note = document.createElement("p");
      note.textContent = `${p.name}: ${p.kind.replace(/_/g, " ")}${p.level === "base" ? " at the base price" : ""}`;
      policies.append(note);
    }
  });
  $("request-json").value = JSON.stringify(request, null, 2);
}

function requestFromForm() {
  let request;
  try {
    request = JSON.parse($("request-json").value);
  } catch (e) {
    throw new Error(`The whole request is not valid JSON: ${e.message}`);
  }
  for (const input of document.querySelectorAll("#scenario-form input[data-pointer]")) {
    if (input.disabled) continue;
    const value = asNumber(input.value);
    if (value !== undefined) setAt(request, input.dataset.pointer, value);
  }
  return request;
}

function units() {
  return { currency: $("u-currency").value || "money", quantity: $("u-quantity").value || "units", period: $("u-period").value || "period" };
}

function clearErrors() {
  for (const e of document.querySelectorAll(".error")) e.remove();
  for (const input of document.querySelectorAll("[aria-invalid]")) {
    input.removeAttribute("aria-invalid");
    input.removeAttribute("aria-describedby");
  }
  $("other-errors").replaceChildren();
}

function showProblem(problem) {
  const rest = [];
  (problem.errors || [{ pointer: "", message: problem.detail }]).forEach((err, n) => {
    const input = document.querySelector(`[data-pointer="${CSS.escape(err.pointer)}"]`);
    if (input && !input.disabled) {
      const p = document.createElement("p");
      p.className = "error";
      p.id = `error-${n}`;
      p.textContent = err.message;
      input.after(p);
      input.setAttribute("aria-invalid", "true");
      input.setAttribute("aria-describedby", p.id);
    } else {
      rest.push(`${err.pointer || "/"}: ${err.message}`);
    }
  });
  if (rest.length) {
    const list = document.createElement("ul");
    for (const text of rest) { const li = document.createElement("li"); li.textContent = text; list.append(li); }
    $("other-errors").append(`${problem.title}:`, list);
  }
  const first = document.querySelector("[aria-invalid='true']");
  if (first) first.focus();
  $("status").textContent = `Not run: ${problem.detail}`;
}

const fmt = new Intl.NumberFormat(undefined, { maximumFractionDigits: 0 });
const fmt2 = new Intl.NumberFormat(undefined, { maximumFractionDigits: 2 });

function showResults(body, text) {
  // A bands answer carries the central path's summary, and percentiles of each figure.
  const bands = state.endpoint === "/v1/bands";
  const summary = bands ? body.central.summary : body.summary;
  const head = document.querySelector("#summary thead tr");
  head.querySelector(".range")?.remove();
  if (bands) {
    const th = document.createElement("th");
    th.scope = "col";
    th.className = "range";
    const keys = body.percentiles.map(String);
    th.textContent = `Discounted deadweight loss, ${keys[0]}th to ${keys[keys.length - 1]}th percentile`;
    head.append(th);
  }
  const tbody = document.querySelector("#summary tbody");
  tbody.replaceChildren();
  summary.forEach((s, i) => {
    const tr = document.createElement("tr");
    const cells = [s.name, fmt.format(s.discounted_deadweight_loss), fmt.format(s.peak_shortage),
      fmt2.format(s.final_consumer_price), String(s.binding_periods)];
    if (bands) {
      const q = body.bands[i].summary.discounted_deadweight_loss;
      const keys = Object.keys(q).sort((a, b) => Number(a) - Number(b));
      cells.push(`${fmt.format(q[keys[0]])} to ${fmt.format(q[keys[keys.length - 1]])}`);
    }
    cells.forEach((c, j) => { const td = document.createElement(j ? "td" : "th"); if (!j) td.scope = "row"; td.textContent = c; tr.append(td); });
    tbody.append(tr);
  });
  $("summary").querySelector("caption").textContent = bands
    ? `At the central elasticities, with the spread over ${fmt.format(body.draws)} draws (money per model period, summed)`
    : "Per policy over the horizon (money per model period, summed)";
  $("summary").hidden = false;
  const list = $("cautions");
  list.replaceChildren(...body.cautions.map((c) => { const li = document.createElement("li"); li.textContent = c; return li; }));
  $("cautions-heading").hidden = false;
  for (const url of state.objectUrls) URL.revokeObjectURL(url);
  state.objectUrls = [URL.createObjectURL(new Blob([text], { type: "application/json" }))];
  $("download-json").href = state.objectUrls[0];
  $("download-csv").hidden = bands;
  $("downloads").hidden = false;
  const periods = (bands ? body.central.periods : body.periods).length - 1;
  $("status").textContent = `Computed ${summary.length} policies over ${periods} periods${bands ? ` and ${fmt.format(body.draws)} draws` : ""}.`;
}

async function drawChart(request, scenarioId) {
  const response = await fetch("/v1/charts", {
    method: "POST", headers: { "Content-Type": "application/json" },
    body: JSON.stringify({ chart: state.endpoint === "/v1/bands" ? "bands" : "paths", format: "svg", units: units(), scenario: request }),
  });
  if (!response.ok) { $("status").textContent += " (The chart could not be drawn.)"; return; }
  const url = URL.createObjectURL(await response.blob());
  state.objectUrls.push(url);
  const chart = $("chart");
  chart.onload = () => { chart.dataset.scenario = scenarioId; };
  chart.src = url;
  $("chart-figure").hidden = false;
}

async function csvLink(request) {
  const response = await fetch("/v1/paths", {
    method: "POST", headers: { "Content-Type": "application/json", Accept: "text/csv" }, body: JSON.stringify(request),
  });
  if (response.ok) {
    const url = URL.createObjectURL(await response.blob());
    state.objectUrls.push(url);
    $("download-csv").href = url;
  }
}

async function run(event) {
  event.preventDefault();
  clearErrors();
  let request;
  try {
    request = requestFromForm();
  } catch (e) {
    $("other-errors").textContent = e.message;
    return;
  }
  // Nothing from an earlier run may stand next to this one's numbers.
  $("status").textContent = "Running...";
  $("chart-figure").hidden = true;
  $("chart").removeAttribute("src");
  delete $("chart").dataset.scenario;
  $("summary").hidden = true;
  $("downloads").hidden = true;
  const response = await fetch(state.endpoint, {
    method: "POST", headers: { "Content-Type": "application/json" }, body: JSON.stringify(request),
  });
  const text = await response.text();
  const body = JSON.parse(text);
  if (!response.ok) { showProblem(body); return; }
  state.request = request;
  $("request-json").value = JSON.stringify(request, null, 2);
  showResults(body, text);
  $("results").dataset.scenario = body.scenario_id;
  const work = [drawChart(request, body.scenario_id)];
  if (state.endpoint === "/v1/paths") work.push(csvLink(request));
  await Promise.all(work);
}

async function loadDemo() {
  const name = $("demo").value;
  state.endpoint = state.endpoints[name] || "/v1/paths";
  const response = await fetch(`/v1/examples/${encodeURIComponent(name)}`);
  state.request = await response.json();
  clearErrors();
  renderForm(state.request);
  $("status").textContent = `Loaded ${name}. Change inputs, then run it.`;
}

async function start() {
  const response = await fetch("/v1/examples");
  const { examples } = await response.json();
  const select = $("demo");
  for (const e of examples) {
    const option = document.createElement("option");
    option.value = e.name;
    option.textContent = e.endpoint === "/v1/bands" ? `${e.title} (bands)` : e.title;
    state.endpoints[e.name] = e.endpoint;
    select.append(option);
  }
  $("load-demo").addEventListener("click", loadDemo);
  $("scenario-form").addEventListener("submit", run);
  // Editing the JSON by hand refreshes the form fields.
  $("request-json").addEventListener("change", () => {
    try { renderForm(JSON.parse($("request-json").value)); } catch (e) { /* shown on run */ }
  });
  await loadDemo();
}

start();
