// shockpath's page: plain JavaScript, no library, no network beyond this service.
"use strict";

const $ = (id) => document.getElementById(id);
const state = { request: {}, objectUrls: [], endpoint: "/v1/paths", endpoints: {}, demos: {} };
const MAIN_VALUE = { price_ceiling: ["level", "growth"], price_floor: ["level"], quantity_cap: ["level"],
  unit_tax: ["amount"], unit_subsidy: ["amount"], ad_valorem_tax: ["rate"], none: [] };
const SHOCK_VALUE = { step: ["change"], ramp: ["change", "periods"], growth: ["rate"], path: ["values"] };
const SCHEDULE_VALUE = { linear: ["periods"], geometric: ["rate", "half_life"], explicit: ["elasticities"], stock: ["rate", "half_life", "depreciation"] };
const CHOICES = {
  form: ["linear", "constant_elasticity"], rationing: ["efficient", "random"], kind: Object.keys(MAIN_VALUE),
  profile: Object.keys(SHOCK_VALUE), schedule: Object.keys(SCHEDULE_VALUE),
  distribution: ["normal", "uniform", "triangular"],
};
const BAND_KEYS = ["draws", "seed", "percentiles", "supply_correlation"];
// The rules with money in them take "indexed"; only a price ceiling takes "coverage".
const INDEXED_KINDS = ["price_ceiling", "price_floor", "unit_tax", "unit_subsidy"];
const MARKET_KEYS = ["price", "quantity", "payments_per_period", "form", "inflation"];
// The groups of who gains and who loses, in the response's order, as the table heads them.
const GROUPS = [["tenants_in_controlled_homes", "Tenants in controlled homes"],
  ["tenants_in_uncontrolled_homes", "Tenants in uncontrolled homes"],
  ["households_priced_out", "Households priced or rationed out"],
  ["owners_of_controlled_homes", "Owners of controlled homes"],
  ["owners_of_uncontrolled_homes", "Owners of uncontrolled homes"], ["government", "Government"]];
// The fields the README's first table names get the ids the page has always had.
const IDS = { "/market/price": "f-price", "/market/quantity": "f-quantity", "/market/demand/price_elasticity": "f-eta",
  "/market/supply/short_run_elasticity": "f-sr", "/market/supply/long_run_elasticity": "f-lr", "/horizon": "f-horizon" };
const LABELS = { price: "Price per unit", quantity: "Quantity", payments_per_period: "Payments per period (default 12)",
  form: "Curve form", price_elasticity: "Price elasticity (below 0)", short_run_elasticity: "Short-run elasticity",
  long_run_elasticity: "Long-run elasticity", horizon: "Horizon (periods)", schedule: "Adjustment schedule",
  periods: "Periods", rate: "Rate", half_life: "Half-life (periods)", elasticities: "Elasticities per period (comma-separated)",
  depreciation: "Depreciation", start: "Start period (optional)", end: "End period (optional)", change: "Change (fraction)",
  values: "Values per period (comma-separated)", shifter: "Shifter", profile: "Profile", name: "Name", kind: "Kind",
  level: "Level (a price, or base)", growth: "Growth cap per period", amount: "Amount per unit",
  coverage: "Coverage (share of homes, default 1)", indexed: "Indexed to inflation",
  inflation: "Inflation per period (a rate, or comma-separated rates)", rationing: "Rationing of a binding ceiling",
  discount_rate: "Discount rate (a number, or JSON steps)", draws: "Draws", seed: "Seed",
  percentiles: "Percentiles (comma-separated)", supply_correlation: "Supply correlation (optional)",
  mean: "mean", sd: "sd", low: "low", high: "high", mode: "mode", distribution: "distribution" };
// A note under a field (read with it by screen readers: aria-describedby).
const HINTS = {
  inflation: "Prices and welfare stay in real money of period 0 (nominal prices are in the answer); ceilings, floors, growth caps, unit taxes and subsidies are then fixed in money unless indexed.",
  indexed: "With inflation: the rule moves with prices (a growth cap becomes inflation plus the cap).",
  coverage: "Share of the homes the ceiling covers, above 0 and up to 1 (e.g. older buildings only); the rest rent freely.",
  schedule: "linear, geometric and explicit move the supply elasticity; stock models the homes themselves (a share of the gap closed each period by rate or half-life, at most the depreciation share lost per period).",
  depreciation: "Stock schedule: the largest share of the homes lost in one period, 0 to 1; empty: no such floor.",
};

const unescape = (k) => k.replace(/~1/g, "/").replace(/~0/g, "~");
const escape = (k) => String(k).replace(/~/g, "~0").replace(/\//g, "~1");

function getAt(obj, pointer) {
  return pointer.split("/").slice(1).reduce((o, k) => (o == null ? undefined : o[unescape(k)]), obj);
}

function setAt(obj, pointer, value) {
  const keys = pointer.split("/").slice(1).map(unescape);
  let o = obj;
  for (const k of keys.slice(0, -1)) { if (o[k] == null) o[k] = {}; o = o[k]; }
  const last = keys[keys.length - 1];
  if (value === undefined) delete o[last]; else o[last] = value;
}

function asNumber(text) {
  const trimmed = text.trim();
  if (trimmed === "") return undefined;
  const n = Number(trimmed);
  return Number.isFinite(n) ? n : trimmed;  // a non-number goes through, for the server to point at
}

// How each kind of input turns its text into a request value (undefined: leave the field out).
const PARSE = {
  number: asNumber,
  text: (t) => (t === "" ? undefined : t),
  list: (t) => (t.trim() === "" ? undefined : t.split(",").map((x) => asNumber(x) ?? x)),
  json: (t) => { if (t.trim() === "") return undefined; try { return JSON.parse(t); } catch (e) { return asNumber(t); } },
  // One number, or a comma-separated list of them (market.inflation).
  numbers: (t) => {
    const parts = t.split(",").filter((x) => x.trim() !== "").map((x) => asNumber(x));
    return parts.length === 0 ? undefined : parts.length === 1 ? parts[0] : parts;
  },
  boolean: (t) => (t.trim() === "" ? undefined : t.trim() === "true" ? true : t.trim() === "false" ? false : t),
};

function shown(value, type) {
  if (value == null) return "";
  if ((type === "list" || type === "numbers") && Array.isArray(value)) return value.join(", ");
  if (typeof value === "object") return JSON.stringify(value);
  return String(value);
}

function typeOf(key, value) {
  if (["name", "shifter"].includes(key)) return "text";
  if (key === "indexed") return "boolean";
  if (key === "inflation") return "numbers";
  if (Array.isArray(value) && value.every((v) => typeof v === "number")) return "list";
  if (["values", "elasticities", "percentiles"].includes(key)) return "list";
  if (key === "discount_rate" && typeof value === "object") return "json";
  return "number";
}

let uid = 0;
function input(pointer, key, value, label) {
  const wrap = document.createElement("div");
  wrap.className = "field";
  const l = document.createElement("label");
  const id = IDS[pointer] || `f${(uid += 1)}`;
  l.htmlFor = id;
  l.textContent = label || LABELS[key] || key.replace(/_/g, " ");
  let control;
  if (CHOICES[key]) {
    control = document.createElement("select");
    const options = CHOICES[key].includes(value) || value == null ? CHOICES[key] : [value, ...CHOICES[key]];
    for (const c of options) { const o = document.createElement("option"); o.value = c; o.textContent = c.replace(/_/g, " "); control.append(o); }
    control.value = value == null ? CHOICES[key][0] : value;
    control.addEventListener("change", () => { setAt(state.request, pointer, control.value); restructure(pointer, key); });
  } else if (key === "indexed" && (value == null || typeof value === "boolean")) {
    // A checkbox: checked sends true, unchecked leaves the field out (its default, false).
    control = document.createElement("input");
    control.type = "checkbox";
    control.checked = value === true;
    control.addEventListener("change", () => { setAt(state.request, pointer, control.checked ? true : undefined); syncJson(); });
    wrap.classList.add("check");
  } else {
    control = document.createElement("input");
    const type = typeOf(key, value);
    control.dataset.type = type;
    control.inputMode = type === "number" ? "decimal" : "text";
    control.value = shown(value, type);
    control.addEventListener("input", () => { setAt(state.request, pointer, PARSE[type](control.value)); syncJson(); });
  }
  control.id = id;
  control.dataset.pointer = pointer;
  wrap.append(l, control);
  if (HINTS[key]) {
    const hint = document.createElement("p");
    hint.className = "hint";
    hint.id = `${id}-hint`;
    hint.textContent = HINTS[key];
    control.dataset.hint = hint.id;
    control.setAttribute("aria-describedby", hint.id);
    wrap.append(hint);
  }
  return wrap;
}

// A number or, for an uncertain elasticity, its distribution's parameters.
function valueFields(container, pointer, key, value, label) {
  if (value && typeof value === "object" && !Array.isArray(value)) {
    for (const [k, v] of Object.entries(value)) {
      container.append(input(`${pointer}/${escape(k)}`, k, v, `${label || LABELS[key] || key}: ${LABELS[k] || k}`));
    }
  } else {
    container.append(input(pointer, key, value, label));
  }
}

function item(title, fields, onRemove) {
  const box = document.createElement("div");
  box.className = "item";
  const h = document.createElement("h3");
  h.textContent = title;
  const grid = document.createElement("div");
  grid.className = "grid";
  grid.append(...fields);
  box.append(h, grid);
  if (onRemove) {
    const b = document.createElement("button");
    b.type = "button";
    b.className = "remove";
    b.textContent = `Remove ${title}`;
    b.addEventListener("click", onRemove);
    box.append(b);
  }
  return box;
}

function keyedFields(pointer, obj, order, labels = {}) {
  const keys = [...new Set([...order, ...Object.keys(obj)])];
  const out = document.createElement("div");
  for (const k of keys) valueFields(out, `${pointer}/${escape(k)}`, k, obj[k], labels[k]);
  return [...out.children];
}

function renderForm(request) {
  state.request = request;
  const market = request.market || {};
  const m = $("market-fields");
  m.replaceChildren();
  for (const k of MARKET_KEYS) valueFields(m, `/market/${k}`, k, market[k]);
  for (const side of ["demand", "supply"]) {
    const curve = market[side] || {};
    const main = side === "demand" ? ["price_elasticity"] : ["short_run_elasticity", "long_run_elasticity"];
    for (const k of main) valueFields(m, `/market/${side}/${k}`, k, curve[k], `${side === "demand" ? "Demand" : "Supply"} ${(LABELS[k] || k).toLowerCase()}`);
    for (const [name, v] of Object.entries(curve.shifters || {})) {
      valueFields(m, `/market/${side}/shifters/${escape(name)}`, name, v, `${side} elasticity to ${name.replace(/_/g, " ")}`);
    }
  }
  for (const k of Object.keys(market)) {
    if (![...MARKET_KEYS, "demand", "supply"].includes(k)) valueFields(m, `/market/${escape(k)}`, k, market[k]);
  }
  const t = $("time-fields");
  t.replaceChildren();
  valueFields(t, "/horizon", "horizon", request.horizon);
  const adjustment = request.adjustment || { schedule: "linear" };
  // Under the stock schedule the rate is the share of the gap to the desired stock closed per period.
  const stockLabels = adjustment.schedule === "stock"
    ? { rate: "Rate (share of the gap closed per period; empty: short-run / long-run elasticity)" } : {};
  t.append(...keyedFields("/adjustment", adjustment, ["schedule", ...(SCHEDULE_VALUE[adjustment.schedule] || [])], stockLabels));

  const shocks = $("shock-fields");
  shocks.replaceChildren();
  (request.shocks || []).forEach((s, i) => {
    const order = ["shifter", "profile", ...(SHOCK_VALUE[s.profile] || []), ...(s.profile === "path" ? [] : ["start"])];
    shocks.append(item(`shock ${i + 1} (${s.shifter})`, keyedFields(`/shocks/${i}`, s, order)));
  });
  if (!shocks.children.length) shocks.textContent = "No shocks.";

  const policies = $("policy-fields");
  policies.replaceChildren();
  (request.policies || []).forEach((p, i) => {
    const main = (MAIN_VALUE[p.kind] || []).filter((k) => k in p);
    const extra = [...(p.kind === "price_ceiling" ? ["coverage"] : []), ...(INDEXED_KINDS.includes(p.kind) ? ["indexed"] : [])];
    const order = ["name", "kind", ...(main.length ? main : (MAIN_VALUE[p.kind] || []).slice(0, 1)), ...extra, "start", "end"];
    policies.append(item(`policy ${i + 1}: ${p.name}`, keyedFields(`/policies/${i}`, p, order), () => {
      state.request.policies.splice(i, 1);
      renderForm(state.request);
    }));
  });

  const welfare = request.welfare || {};
  const w = $("welfare-fields");
  w.replaceChildren(...keyedFields("/welfare", welfare, ["rationing", "discount_rate"]));

  const bands = endpointFor(request) === "/v1/bands";
  $("uncertainty-fieldset").hidden = !bands;
  const u = $("uncertainty-fields");
  u.replaceChildren();
  if (bands) for (const k of BAND_KEYS) valueFields(u, `/${k}`, k, request[k]);
  syncJson();
}

// A choice that changes which fields exist (a policy's kind, a shock's profile, the schedule).
function restructure(pointer, key) {
  const parent = pointer.split("/").slice(0, -1).join("/");
  const obj = getAt(state.request, parent);
  const price = Number(getAt(state.request, "/market/price")) || 100;
  const quantity = Number(getAt(state.request, "/market/quantity")) || 1000;
  const round = (x) => Number(x.toPrecision(3));
  if (key === "kind") {
    for (const k of ["level", "growth", "amount", "rate"]) delete obj[k];
    if (obj.kind !== "price_ceiling") delete obj.coverage;
    if (!INDEXED_KINDS.includes(obj.kind)) delete obj.indexed;
    Object.assign(obj, { price_ceiling: { level: "base" }, price_floor: { level: round(price * 1.1) },
      quantity_cap: { level: round(quantity * 0.98) }, unit_tax: { amount: round(price * 0.05) },
      unit_subsidy: { amount: round(price * 0.05) }, ad_valorem_tax: { rate: 0.05 }, none: {} }[obj.kind]);
  } else if (key === "profile") {
    for (const k of ["change", "rate", "values", "periods", "start"]) delete obj[k];
    Object.assign(obj, { step: { change: 0.05 }, ramp: { change: 0.05, periods: 3 }, growth: { rate: 0.02 }, path: { values: [0.05] } }[obj.profile]);
  } else if (key === "schedule") {
    for (const k of ["periods", "rate", "half_life", "elasticities", "depreciation"]) delete obj[k];
    Object.assign(obj, { linear: { periods: 8 }, geometric: {}, explicit: { elasticities: [0.1, 0.5, 1.0] }, stock: {} }[obj.schedule]);
  }
  renderForm(state.request);
}

function addPolicy() {
  const policies = (state.request.policies = state.request.policies || []);
  const names = new Set(policies.map((p) => p.name));
  let n = policies.length + 1;
  while (names.has(`policy ${n}`)) n += 1;
  policies.push({ name: `policy ${n}`, kind: "price_ceiling", level: "base" });
  renderForm(state.request);
  $("policy-fields").lastElementChild.querySelector("input").focus();
}

function syncJson() {
  $("request-json").value = JSON.stringify(state.request, null, 2);
}

function hasDistribution(value) {
  if (value == null || typeof value !== "object") return false;
  if (!Array.isArray(value) && "distribution" in value) return true;
  return Object.values(value).some(hasDistribution);
}

// The request decides the endpoint: distributions or band settings make it a bands request.
function endpointFor(request) {
  return BAND_KEYS.some((k) => k in request) || hasDistribution(request.market) ? "/v1/bands" : "/v1/paths";
}

function requestFromForm() {
  try {
    return JSON.parse($("request-json").value);
  } catch (e) {
    throw new Error(`The whole request is not valid JSON: ${e.message}`);
  }
}

function units() {
  return { currency: $("u-currency").value || "money", quantity: $("u-quantity").value || "units",
    unit: $("u-unit").value || "unit", price_interval: $("u-interval").value || "price interval",
    period: $("u-period").value || "period" };
}

function clearErrors() {
  for (const e of document.querySelectorAll(".error")) e.remove();
  for (const input of document.querySelectorAll("[aria-invalid]")) {
    input.removeAttribute("aria-invalid");
    if (input.dataset.hint) input.setAttribute("aria-describedby", input.dataset.hint);
    else input.removeAttribute("aria-describedby");
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
      input.setAttribute("aria-describedby", input.dataset.hint ? `${p.id} ${input.dataset.hint}` : p.id);
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
  for (const th of head.querySelectorAll(".range, .stock")) th.remove();
  // Under the stock schedule the summary carries the homes below the free path.
  const stock = summary.every((s) => "final_homes_below_free_path" in s);
  if (stock) {
    for (const text of ["Final homes below the free path", "Peak homes below the free path"]) {
      const th = document.createElement("th");
      th.scope = "col";
      th.className = "stock";
      th.textContent = text;
      const unit = document.createElement("span");
      unit.className = "unit";
      unit.textContent = units().quantity;
      th.append(unit);
      head.append(th);
    }
  }
  if (bands) {
    const th = document.createElement("th");
    th.scope = "col";
    th.className = "range";
    const keys = body.percentiles.map(String);
    th.textContent = `Discounted deadweight loss, ${keys[0]}th to ${keys[keys.length - 1]}th percentile`;
    const unit = document.createElement("span");
    unit.className = "unit";
    unit.textContent = "money, per model period, summed and discounted";
    th.append(unit);
    head.append(th);
  }
  const tbody = document.querySelector("#summary tbody");
  tbody.replaceChildren();
  summary.forEach((s, i) => {
    const tr = document.createElement("tr");
    const cells = [s.name, fmt.format(s.discounted_deadweight_loss), fmt.format(s.peak_shortage),
      fmt2.format(s.final_consumer_price), fmt.format(s.final_quantity), fmt.format(s.total_consumer_surplus_change),
      fmt.format(s.total_producer_surplus_change), fmt.format(s.total_government_revenue), String(s.binding_periods)];
    if (stock) cells.push(fmt.format(s.final_homes_below_free_path), fmt.format(s.peak_homes_below_free_path));
    if (bands) {
      const q = body.bands[i].summary.discounted_deadweight_loss;
      const keys = Object.keys(q).sort((a, b) => Number(a) - Number(b));
      cells.push(`${fmt.format(q[keys[0]])} to ${fmt.format(q[keys[keys.length - 1]])}`);
    }
    cells.forEach((c, j) => { const td = document.createElement(j ? "td" : "th"); if (!j) td.scope = "row"; td.textContent = c; tr.append(td); });
    tbody.append(tr);
  });
  $("summary").querySelector("caption").textContent = bands
    ? `Per policy over the horizon, at the central elasticities, with the spread over ${fmt.format(body.draws)} draws`
    : "Per policy over the horizon";
  $("summary").hidden = false;
  showGroups(summary);
  const list = $("cautions");
  list.replaceChildren(...body.cautions.map((c) => { const li = document.createElement("li"); li.textContent = c; return li; }));
  $("cautions-heading").hidden = false;
  for (const url of state.objectUrls) URL.revokeObjectURL(url);
  state.objectUrls = [URL.createObjectURL(new Blob([text], { type: "application/json" }))];
  $("download-json").href = state.objectUrls[0];
  $("download-csv").download = bands ? "bands.csv" : "paths.csv";
  $("downloads").hidden = false;
  const periods = (bands ? body.central.periods : body.periods).length - 1;
  $("status").textContent = `Computed ${summary.length} policies over ${periods} periods${bands ? ` and ${fmt.format(body.draws)} draws` : ""}.`;
}

// Who gains and who loses: each group's total per policy (the summary's distribution_totals,
// summed over the horizon, not discounted); null under random rationing.
function showGroups(summary) {
  const table = $("groups");
  if (!summary.every((s) => "distribution_totals" in s)) { table.hidden = true; return; }
  const u = units();
  const per = u.period === "period" ? "model period" : u.period;
  for (const span of table.querySelectorAll("thead .unit")) span.textContent = `${u.currency} per ${per}, summed over the horizon`;
  const tbody = table.querySelector("tbody");
  tbody.replaceChildren();
  for (const s of summary) {
    const tr = document.createElement("tr");
    const th = document.createElement("th");
    th.scope = "row";
    th.textContent = s.name;
    tr.append(th);
    if (s.distribution_totals == null) {
      const td = document.createElement("td");
      td.colSpan = GROUPS.length;
      td.className = "absent";
      td.textContent = "not reported under random rationing";
      tr.append(td);
    } else {
      for (const [key] of GROUPS) {
        const td = document.createElement("td");
        const v = s.distribution_totals[key];
        td.textContent = v > 0 ? `+${fmt.format(v)}` : fmt.format(v);
        td.dataset.group = key;
        tr.append(td);
      }
    }
    tbody.append(tr);
  }
  table.hidden = false;
}

// A chart of this run: the paths (or bands), or who gains and who loses.
async function drawChart(request, scenarioId, chart = state.endpoint === "/v1/bands" ? "bands" : "paths", image = "chart", figure = "chart-figure") {
  const response = await fetch("/v1/charts", {
    method: "POST", headers: { "Content-Type": "application/json" },
    body: JSON.stringify({ chart, format: "svg", units: units(), scenario: request }),
  });
  if (!response.ok) { $("status").textContent += " (The chart could not be drawn.)"; return; }
  const url = URL.createObjectURL(await response.blob());
  state.objectUrls.push(url);
  const img = $(image);
  img.onload = () => { img.dataset.scenario = scenarioId; };
  img.src = url;
  $(figure).hidden = false;
}

function describeChart(body) {
  const stock = body.paths?.every((p) => "homes_below_free_path" in p);
  const panels = stock ? "Consumer price, quantity, homes below the free path, shortage and cumulative deadweight loss"
    : "Consumer price, quantity, shortage and cumulative deadweight loss";
  $("chart").alt = `${panels} over the periods, one line per policy`;
  $("chart-caption").textContent = stock
    ? "Period 0 is today's market; each line is one policy. Under the stock schedule homes not built stay missing: the homes below the free path."
    : "Period 0 is today's market; each line is one policy.";
}

async function csvLink(request) {
  const response = await fetch(state.endpoint, {
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
  for (const [figure, image] of [["chart-figure", "chart"], ["gains-figure", "gains-chart"]]) {
    $(figure).hidden = true;
    $(image).removeAttribute("src");
    delete $(image).dataset.scenario;
  }
  $("summary").hidden = true;
  $("groups").hidden = true;
  $("downloads").hidden = true;
  state.endpoint = endpointFor(request);
  const response = await fetch(state.endpoint, {
    method: "POST", headers: { "Content-Type": "application/json" }, body: JSON.stringify(request),
  });
  const text = await response.text();
  const body = JSON.parse(text);
  if (!response.ok) { showProblem(body); return; }
  showResults(body, text);
  $("results").dataset.scenario = body.scenario_id;
  $("results").dataset.endpoint = state.endpoint;
  const charts = [drawChart(request, body.scenario_id), csvLink(request)];
  if (state.endpoint === "/v1/paths") {
    describeChart(body);
    // The split is drawn where it is reported (efficient rationing).
    if (body.summary.every((s) => s.distribution_totals != null)) {
      charts.push(drawChart(request, body.scenario_id, "gains_and_losses", "gains-chart", "gains-figure"));
    }
  }
  await Promise.all(charts);
}

async function loadDemo() {
  const name = $("demo").value;
  if (!name) return;
  const response = await fetch(`/v1/examples/${encodeURIComponent(name)}`);
  const request = await response.json();
  state.demos[name] = JSON.stringify(request);
  clearErrors();
  renderForm(request);
  $("status").textContent = `Loaded ${name}. Change inputs, then run it.`;
}

// After a paste the picker names the demo the request is, or says it is the caller's own.
function updatePicker(request) {
  const text = JSON.stringify(request);
  const match = Object.keys(state.demos).find((name) => state.demos[name] === text);
  $("demo").value = match || "";
}

async function start() {
  const response = await fetch("/v1/examples");
  const { examples } = await response.json();
  const select = $("demo");
  const own = document.createElement("option");
  own.value = "";
  own.textContent = "Your own request (pasted or edited)";
  select.append(own);
  for (const e of examples) {
    const option = document.createElement("option");
    option.value = e.name;
    option.textContent = e.endpoint === "/v1/bands" ? `${e.title} (bands)` : e.title;
    state.endpoints[e.name] = e.endpoint;
    select.append(option);
  }
  select.value = examples.length ? examples[0].name : "";
  $("load-demo").addEventListener("click", loadDemo);
  $("add-policy").addEventListener("click", addPolicy);
  $("scenario-form").addEventListener("submit", run);
  // Pasting or editing the JSON by hand redraws the form and the picker.
  $("request-json").addEventListener("change", () => {
    let request;
    try { request = JSON.parse($("request-json").value); } catch (e) { return; /* shown on run */ }
    clearErrors();
    renderForm(request);
    updatePicker(request);
  });
  await loadDemo();
}

start();
