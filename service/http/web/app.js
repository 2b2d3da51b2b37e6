// shockpath's page: plain JavaScript, no library, no network beyond this service.
// Names and units of every series, total and input come from /ui/labels.json (service/labels.py),
// and the tables iterate over what the answer carries: new series appear without a change here.
"use strict";

const $ = (id) => document.getElementById(id);
const state = {
  request: {}, labels: null, endpoint: "/v1/paths", demos: {}, titles: {}, demoUnits: {}, answer: null, sensitivity: null,
  urls: [], rendered: "", pending: null,
  givenName: "",  // the scenario name the page set itself (a demo's, a file's), not one typed
};
const BAND_KEYS = ["draws", "seed", "percentiles", "supply_correlation"];
const MAIN_VALUE = { price_ceiling: ["level", "growth"], price_floor: ["level"], quantity_cap: ["level"],
  unit_tax: ["amount"], unit_subsidy: ["amount"], ad_valorem_tax: ["rate"], none: [] };
const SHOCK_VALUE = { step: ["change", "start"], ramp: ["change", "periods", "start"], growth: ["rate", "start"], path: ["values"] };
const SCHEDULE_VALUE = { linear: ["periods"], geometric: ["rate", "half_life"], explicit: ["elasticities"],
  stock: ["rate", "half_life", "depreciation", "build_limit", "conversion"] };
const CHOICES = {
  "market.form": ["linear", "constant_elasticity"], "welfare.rationing": ["efficient", "random"],
  "policies.kind": Object.keys(MAIN_VALUE), "shocks.profile": Object.keys(SHOCK_VALUE),
  "adjustment.schedule": Object.keys(SCHEDULE_VALUE), "policies.new_homes": ["", "covered", "exempt"],
};
const INDEXED_KINDS = ["price_ceiling", "price_floor", "unit_tax", "unit_subsidy"];
// Fields written as fractions: they also accept "2.5 %".
const PERCENT = new Set(["market.inflation", "shocks.change", "shocks.rate", "shocks.values", "policies.growth",
  "policies.rate", "policies.coverage", "policies.vacancy_decontrol", "adjustment.rate", "adjustment.depreciation",
  "adjustment.build_limit", "welfare.discount_rate"]);
const LISTS = new Set(["market.inflation", "shocks.values", "adjustment.elasticities", "percentiles"]);
const ELASTICITY = /^\/market\/(demand\/price_elasticity|supply\/(short|long)_run_elasticity|(demand|supply)\/shifters\/[^/]+)$/;
// Inputs other than the elasticities that a bands request may draw (the uncertain schemas): each
// gets the "known or uncertain?" choice once it has a value; the fractions among them stay <= 1.
const UNCERTAIN_TOO = /^\/(market\/inflation|adjustment\/(rate|depreciation|conversion)|policies\/\d+\/vacancy_decontrol)$/;
const AT_MOST_ONE = /^\/(adjustment\/(rate|depreciation)|policies\/\d+\/vacancy_decontrol)$/;
// The fields the README's first table names keep the ids the page has always had.
const IDS = { "/market/price": "f-price", "/market/quantity": "f-quantity", "/market/demand/price_elasticity": "f-eta",
  "/market/supply/short_run_elasticity": "f-sr", "/market/supply/long_run_elasticity": "f-lr", "/horizon": "f-horizon",
  "/market/inflation": "f-inflation", "/adjustment/schedule": "f-schedule" };
// The year-by-year table's columns unless "every series" is ticked (each where the answer has it).
const YEAR_COLUMNS = ["price_index", "consumer_price", "nominal_consumer_price", "covered_price", "uncovered_price",
  "quantity", "homes_below_free_path", "vacant_homes", "converted_homes", "shortage", "vs_free_path.renters",
  "deadweight_loss", "discounted_deadweight_loss"];

const unescape = (k) => k.replace(/~1/g, "/").replace(/~0/g, "~");
const escape = (k) => String(k).replace(/~/g, "~0").replace(/\//g, "~1");
const fmt = new Intl.NumberFormat("en", { maximumFractionDigits: 0 });
const fmt2 = new Intl.NumberFormat("en", { maximumFractionDigits: 2 });
const fmt3 = new Intl.NumberFormat("en", { maximumSignificantDigits: 3 });
const fmt4 = new Intl.NumberFormat("en", { maximumSignificantDigits: 4 });
const wholeOr = (digits) => new Intl.NumberFormat("en", { maximumFractionDigits: digits });
const LARGE = [[1e12, "trillion"], [1e9, "billion"], [1e6, "million"]];

// Results smaller than this share of their scale are the rounding of a difference, not a
// finding: shown as about 0 (the downloads keep every digit). The engine's rule (NEGLIGIBLE in
// service/engine/cautions.py): the scale is the base rent for rents, the base homes for homes,
// the base rent bill for money; `scale` 1 (no scale) for the rest.
const ROUNDING = 1e-9;

// A figure measured against a scale (rents, homes, money) is shown to the precision its model
// estimate has, not to the last digit: from a million in words with four figures (459.3
// million, not 459,333,814), below that to about a thousandth of its scale (48 homes, not
// 47.98; a rent of 12.35 on a base rent of 12.50). The downloads keep every digit.
function number(v, scale = 1) {
  if (v == null) return "\u2013";
  if (typeof v !== "number") return String(v).replace(/_/g, " ");  // a choice: constant_elasticity
  if (v === 0) return "0";
  const a = Math.abs(v);
  const scaled = Number.isFinite(scale) && scale > 0;
  if (a < ROUNDING * (scaled ? scale : 1)) return "\u2248 0";
  if (scaled && scale !== 1 && a >= 1) {
    const large = LARGE.find(([size]) => a >= size);
    if (large) return `${fmt4.format(v / large[0])} ${large[1]}`;
    return wholeOr(Math.max(0, Math.min(3, 3 - Math.floor(Math.log10(scale))))).format(v);
  }
  return a >= 100 ? fmt.format(v) : a >= 1 ? fmt2.format(v) : fmt3.format(v);
}
const signed = (v, scale = 1) => (number(v, scale).startsWith("\u2248") ? number(v, scale) : v > 0 ? `+${number(v, scale)}` : number(v, scale));

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

// --- names, units and the money basis (labels.json) ---------------------------------------

function units() {
  return { currency: $("u-currency").value || "money", quantity: $("u-quantity").value || "units",
    unit: $("u-unit").value || "unit", price_interval: $("u-interval").value || "price interval",
    period: $("u-period").value || "period" };
}

// The unit fields as typed, trimmed (empty ones left out): what a link, a saved scenario and a
// file carry. The library panel (library.js) uses these two as well.
const UNIT_FIELDS = { currency: "u-currency", quantity: "u-quantity", unit: "u-unit", price_interval: "u-interval", period: "u-period" };
function typedUnits() {
  return Object.fromEntries(Object.entries(UNIT_FIELDS).map(([k, id]) => [k, $(id).value.trim()]).filter(([, v]) => v));
}

// Units back in the fields, with the events typing sends (tables and charts relabel). `reset`
// (a saved scenario, a link: all its units or none): a unit not given returns to the page's
// own word, unless its field is empty already; without it (a demo) only the units given change.
function setUnits(units, { reset = true } = {}) {
  for (const [key, id] of Object.entries(UNIT_FIELDS)) {
    const input = $(id);
    const given = typeof units[key] === "string";
    if (!given && (!reset || !input.value.trim())) continue;
    const value = given ? units[key] : input.defaultValue;
    if (input.value === value) continue;
    input.value = value;
    input.dispatchEvent(new Event("input", { bubbles: true }));
    input.dispatchEvent(new Event("change", { bubbles: true }));
  }
}

const fill = (template) => template.replace(/\{(\w+)\}/g, (_, k) => units()[k] ?? k);

function lookup(name, totals) {
  const table = totals ? state.labels.totals : state.labels.series;
  const leaf = name.split(".").pop();
  return table[name] || table[leaf] || state.labels.series[name] || state.labels.totals[name] || null;
}

function labelOf(name, totals = false) {
  const found = lookup(name, totals);
  if (!found) return name.replace(".", ": ").replace(/_/g, " ");
  return found[1] ? `${found[0]} (${found[1]})` : found[0];
}

function unitOf(name, totals = false) {
  const found = lookup(name, totals);
  return found ? fill(found[2]) : "";
}

// The scales of a request's figures (see ROUNDING): the base rent, the base homes, the base rent
// bill of one period (money per period) and over the periods computed (money summed).
function scalesOf(request, periods) {
  const m = request?.market || {};
  const price = typeof m.price === "number" ? m.price : NaN;
  const homes = typeof m.quantity === "number" ? m.quantity : NaN;
  const bill = price * homes * (typeof m.payments_per_period === "number" ? m.payments_per_period : 1);
  return { price, homes, flow: bill, money: bill * periods };
}

// The scale of one figure, by how its unit begins (labels.SCALE_KINDS): rents, money per
// period, money summed, homes; 1 for the rest.
function scaleOf(name, totals, scales) {
  const unit = lookup(name, totals)?.[2] || "";
  const found = state.labels.scale_kinds.find(([start]) => unit.startsWith(start));
  return found ? scales[found[1]] : 1;
}

// Percentiles of a band, as numbers in order, and the words of its outer range: "5th–95th".
const ordinal = (q) => {
  const n = Number(q);
  const last = Math.floor(n) % 100;
  const suffix = Number.isInteger(n) && (last < 11 || last > 13) ? ({ 1: "st", 2: "nd", 3: "rd" }[n % 10] || "th") : "th";
  return `${q}${suffix}`;
};
const bandKeys = (band) => Object.keys(band).sort((a, b) => Number(a) - Number(b));

// A band's range under its figure, as every range on the page: "5th–95th: low to high".
// `flip`: the range of minus the band's figure.
function bandRange(band, scale, { flip = false } = {}) {
  const qs = bandKeys(band);
  const [lo, hi] = [qs[0], qs[qs.length - 1]];
  const span = document.createElement("span");
  span.className = "range";
  const [a, b] = flip ? [-band[hi], -band[lo]] : [band[lo], band[hi]];
  span.textContent = `${ordinal(lo)}\u2013${ordinal(hi)}: ${number(a, scale)} to ${number(b, scale)}`;
  return span;
}

// A note under a figure that the bands do not give a spread for, in the ranges' place.
function rangeNote(text) {
  const span = document.createElement("span");
  span.className = "range";
  span.textContent = text;
  return span;
}

// section.field of a request pointer: market.price, demand.price_elasticity, shocks.change, ...
function fieldKey(pointer) {
  const p = pointer.split("/").slice(1).map(unescape);
  if (p[0] === "market") {
    if (p[2] === "shifters") return "shifters";
    if (p[1] === "demand" || p[1] === "supply") return `${p[1]}.${p[2]}`;
    return `market.${p[1]}`;
  }
  if (p[0] === "shocks" || p[0] === "policies") return `${p[0]}.${p[2]}`;
  if (p[0] === "adjustment" || p[0] === "welfare") return `${p[0]}.${p[1]}`;
  return p[0];
}

function inputWords(pointer) {
  const key = fieldKey(pointer);
  // A policy's field in the words of its kind where they differ (a floor's or a cap's level).
  const kind = key.startsWith("policies.") ? getAt(state.request, `${pointer.split("/").slice(0, 3).join("/")}/kind`) : null;
  const found = (kind && state.labels.inputs[`${kind}.${key.split(".").pop()}`]) || state.labels.inputs[key]
    || state.labels.inputs[key.split(".").pop()];
  const leaf = unescape(pointer.split("/").pop());
  if (key === "shifters") return { label: `Response to ${leaf.replace(/_/g, " ")} (shifter elasticity)`, hint: found ? found[2] : "" };
  if (!found) return { label: leaf.replace(/_/g, " "), hint: "" };
  return { label: found[1] ? `${found[0]} (${found[1]})` : found[0], hint: fill(found[2]) };
}

// --- reading what the analyst typed --------------------------------------------------------

function asNumber(text, percent) {
  const t = String(text).trim();
  if (t === "") return undefined;
  if (percent && t.endsWith("%")) {
    const n = Number(t.slice(0, -1).trim());
    return Number.isFinite(n) ? Number((n / 100).toPrecision(12)) : t;
  }
  // Thousands written with commas ("1,180" or "12,500.5") are one number; a list field splits
  // at commas before its items get here, so this never joins a list's items.
  const grouped = /^[+-]?\d{1,3}(,\d{3})+(\.\d+)?$/.test(t) ? t.replace(/,/g, "") : t;
  const n = Number(grouped);
  return Number.isFinite(n) ? n : t;  // a non-number goes through, for the server to point at
}

function parse(pointer, text) {
  const key = fieldKey(pointer);
  const percent = PERCENT.has(key);
  if (["policies.name", "shocks.shifter"].includes(key)) return text === "" ? undefined : text;
  if (key === "policies.level" && text.trim() === "base") return "base";
  if (key === "welfare.discount_rate" && text.trim().startsWith("[")) {
    try { return JSON.parse(text); } catch (e) { return text; }
  }
  if (LISTS.has(key)) {
    const parts = text.split(",").filter((x) => x.trim() !== "").map((x) => asNumber(x, percent));
    if (parts.length === 0) return undefined;
    return key === "market.inflation" && parts.length === 1 ? parts[0] : parts;
  }
  return asNumber(text, percent);
}

function shown(value) {
  if (value == null) return "";
  if (Array.isArray(value)) return value.every((v) => typeof v !== "object") ? value.join(", ") : JSON.stringify(value);
  if (typeof value === "object") return JSON.stringify(value);
  return String(value);
}

// --- the form ------------------------------------------------------------------------------

let uid = 0;
function field(pointer, value, options = {}) {
  const wrap = document.createElement("div");
  wrap.className = "field";
  const key = fieldKey(pointer);
  const words = inputWords(pointer);
  const label = document.createElement("label");
  const id = IDS[pointer] || `f${(uid += 1)}`;
  label.htmlFor = id;
  label.textContent = options.label || words.label;
  let control;
  const choices = key === "shocks.shifter" ? declaredShifters() : CHOICES[key];
  if (choices) {
    control = document.createElement("select");
    const list = choices.includes(value ?? "") ? choices : [value, ...choices];
    for (const c of list) {
      const o = document.createElement("option");
      o.value = c;
      o.textContent = c === "" ? "(default)" : String(c).replace(/_/g, " ");
      control.append(o);
    }
    control.value = value ?? choices[0];
    control.addEventListener("change", () => {
      setAt(state.request, pointer, control.value === "" ? undefined : control.value);
      restructure(pointer, key);
    });
  } else if (key === "policies.indexed" || key === "policies.base_level") {  // yes or no
    control = document.createElement("input");
    control.type = "checkbox";
    control.checked = value === true;
    control.addEventListener("change", () => { setAt(state.request, pointer, control.checked ? true : undefined); syncJson(); });
    wrap.classList.add("check");
  } else {
    control = document.createElement("input");
    control.inputMode = typeof value === "string" && key !== "policies.level" ? "text" : "decimal";
    control.value = shown(value);
    control.addEventListener("input", () => { setAt(state.request, pointer, parse(pointer, control.value)); syncJson(); });
    if (PERCENT.has(key)) control.dataset.percent = "true";
  }
  control.id = id;
  control.dataset.pointer = pointer;
  wrap.append(label, control);
  const hintText = options.hint ?? words.hint;
  if (hintText) {
    const hint = document.createElement("p");
    hint.className = "hint";
    hint.id = `${id}-hint`;
    hint.textContent = hintText;
    control.dataset.hint = hint.id;
    control.setAttribute("aria-describedby", hint.id);
    wrap.append(hint);
  }
  return wrap;
}

// An elasticity: a number, or (uncertain) a distribution with its parameters.
const DEFAULT_SPREAD = 0.3;
function elasticityFields(pointer, value, label) {
  const out = [];
  const box = document.createElement("div");
  box.className = "field uncertain";
  const select = document.createElement("select");
  select.id = `f${(uid += 1)}`;
  select.dataset.action = `uncertain:${pointer}`;
  // The label names its field (the grid may set the choice under another field in a narrow
  // window), in the field's words without their parenthesis; it is the select's accessible name.
  const choose = document.createElement("label");
  choose.htmlFor = select.id;
  choose.textContent = `${(label || inputWords(pointer).label).split(" (")[0]}: known or uncertain?`;
  for (const [v, text] of [["", "known (one number)"], ["normal", "uncertain: normal"], ["uniform", "uncertain: uniform"], ["triangular", "uncertain: triangular"]]) {
    const o = document.createElement("option");
    o.value = v;
    o.textContent = text;
    select.append(o);
  }
  const uncertain = value && typeof value === "object" && !Array.isArray(value);
  select.value = uncertain ? value.distribution : "";
  select.addEventListener("change", () => {
    const current = getAt(state.request, pointer);
    const central = current && typeof current === "object" ? centralOf(current) : Number(current) || 0;
    const cap = AT_MOST_ONE.test(pointer) ? 1 : Infinity;
    setAt(state.request, pointer, select.value === "" ? central : distribution(select.value, central, cap));
    renderForm(state.request);
    const again = document.querySelector(`[data-action="uncertain:${CSS.escape(pointer)}"]`);
    if (again) again.focus();
  });
  box.append(choose, select);
  if (uncertain) {
    for (const [k, v] of Object.entries(value)) {
      if (k === "distribution") continue;
      out.push(field(`${pointer}/${k}`, v, { label: `${label || inputWords(pointer).label}, ${state.labels.drawn[k] || k}`, hint: "" }));
    }
  } else {
    out.push(field(pointer, value, label ? { label } : {}));
  }
  return [...out, box];
}

// A field that may be drawn: the "known or uncertain?" choice where the value is one number or
// a distribution; otherwise the plain field.
function valueFields(pointer, value) {
  const drawn = value && typeof value === "object" && !Array.isArray(value);
  if (UNCERTAIN_TOO.test(pointer) && (typeof value === "number" || drawn)) return elasticityFields(pointer, value);
  return [field(pointer, value)];
}

function centralOf(d) {
  if (d.distribution === "normal") return d.mean;
  if (d.distribution === "triangular") return d.mode;
  return (d.low + d.high) / 2;
}

function distribution(kind, v, cap = Infinity) {
  const spread = Math.abs(v) * DEFAULT_SPREAD || 0.1;
  const round = (x) => Number(x.toPrecision(4));
  const [low, high] = v < 0 ? [round(v - spread), Math.min(round(v + spread), -0.001)] : [Math.max(round(v - spread), 0), Math.min(round(v + spread), cap)];
  if (kind === "normal") return { distribution: "normal", mean: v, sd: round(spread / 2) };
  if (kind === "uniform") return { distribution: "uniform", low, high };
  return { distribution: "triangular", low, mode: v, high };
}

function button(text, action, onClick, kind = "remove") {
  const b = document.createElement("button");
  b.type = "button";
  b.className = kind;
  b.textContent = text;
  b.dataset.action = action;
  b.addEventListener("click", onClick);
  return b;
}

function item(title, fields, removeText, action, onRemove) {
  const box = document.createElement("div");
  box.className = "item";
  const h = document.createElement("h3");
  h.textContent = title;
  const grid = document.createElement("div");
  grid.className = "grid";
  grid.append(...fields);
  box.append(h, grid);
  if (onRemove) box.append(button(removeText, action, onRemove));
  return box;
}

function renderForm(request, fromJson = false) {
  state.request = request;
  const market = (request.market = request.market || {});
  const m = $("market-fields");
  m.replaceChildren();
  for (const k of ["price", "quantity", "payments_per_period", "form", "inflation"]) m.append(...valueFields(`/market/${k}`, market[k]));
  market.demand = market.demand || {};
  market.supply = market.supply || {};
  m.append(...elasticityFields("/market/demand/price_elasticity", market.demand.price_elasticity));
  for (const k of ["short_run_elasticity", "long_run_elasticity"]) m.append(...elasticityFields(`/market/supply/${k}`, market.supply[k]));
  for (const k of Object.keys(market)) {
    if (!["price", "quantity", "payments_per_period", "form", "inflation", "demand", "supply"].includes(k)) m.append(field(`/market/${escape(k)}`, market[k]));
  }
  const shifters = $("shifter-fields");
  shifters.replaceChildren();
  for (const side of ["demand", "supply"]) {
    for (const [name, v] of Object.entries(market[side].shifters || {})) {
      const pointer = `/market/${side}/shifters/${escape(name)}`;
      const nameField = document.createElement("div");
      nameField.className = "field";
      const l = document.createElement("label");
      const input = document.createElement("input");
      input.id = `f${(uid += 1)}`;
      l.htmlFor = input.id;
      l.textContent = `Name of this ${side} shifter (shocks refer to it)`;
      input.value = name;
      input.dataset.rename = pointer;
      input.addEventListener("change", () => renameShifter(side, name, input.value.trim()));
      nameField.append(l, input);
      shifters.append(item(`${side} shifter: ${name.replace(/_/g, " ")}`, [nameField, ...elasticityFields(pointer, v)],
        `Remove the ${side} shifter ${name}`, `remove-shifter:${side}:${name}`, () => {
          delete state.request.market[side].shifters[name];
          renderForm(state.request);
        }));
    }
  }

  const t = $("time-fields");
  t.replaceChildren(field("/horizon", request.horizon));
  const adjustment = request.adjustment || { schedule: "linear" };
  const keys = [...new Set(["schedule", ...(SCHEDULE_VALUE[adjustment.schedule] || []), ...Object.keys(adjustment)])];
  for (const k of keys) {
    const pointer = `/adjustment/${k}`;
    if (request.adjustment == null && k !== "schedule") continue;
    t.append(...valueFields(pointer, adjustment[k]));
  }
  couplingNote();

  const shocks = $("shock-fields");
  shocks.replaceChildren();
  (request.shocks || []).forEach((s, i) => {
    const keys = [...new Set(["shifter", "profile", ...(SHOCK_VALUE[s.profile] || []), ...Object.keys(s)])];
    shocks.append(item(`shock ${i + 1}: ${String(s.shifter).replace(/_/g, " ")} (real change)`, keys.map((k) => field(`/shocks/${i}/${k}`, s[k])),
      `Remove shock ${i + 1}`, `remove-shock:${i}`, () => { state.request.shocks.splice(i, 1); renderForm(state.request); }));
  });
  if (!shocks.children.length) shocks.textContent = "No shocks.";

  const policies = $("policy-fields");
  policies.replaceChildren();
  (request.policies || []).forEach((p, i) => {
    const ceiling = p.kind === "price_ceiling";
    const keys = [...new Set(["name", "kind", ...(MAIN_VALUE[p.kind] || []),
      ...(ceiling ? ["coverage", "new_homes", "vacancy_decontrol"] : []),
      ...(INDEXED_KINDS.includes(p.kind) ? ["indexed"] : []), "start", "end", ...Object.keys(p)])];
    policies.append(item(`policy ${i + 1}: ${p.name}`, keys.flatMap((k) => valueFields(`/policies/${i}/${k}`, p[k])),
      `Remove policy ${i + 1}: ${p.name}`, `remove-policy:${i}`, () => { state.request.policies.splice(i, 1); renderForm(state.request); }));
  });

  const welfare = request.welfare || {};
  $("welfare-fields").replaceChildren(...[...new Set(["rationing", "discount_rate", ...Object.keys(welfare)])].map((k) => field(`/welfare/${k}`, welfare[k])));

  const bands = endpointFor(request) === "/v1/bands";
  $("uncertainty-fieldset").hidden = !bands;
  $("uncertainty-fields").replaceChildren(...(bands ? BAND_KEYS.map((k) => field(`/${k}`, request[k])) : []));
  if (!fromJson) syncJson();
  state.rendered = JSON.stringify(request);
}

function couplingNote() {
  const note = $("coupling-note");
  const a = state.request.adjustment;
  const tied = a && (a.schedule === "geometric" || a.schedule === "stock") && a.rate == null && a.half_life == null;
  note.hidden = !tied;
  note.textContent = tied
    ? "The adjustment rate is left to its default, short-run / long-run supply elasticity: building speed is then tied to the long-run elasticity (a larger long-run elasticity also means slower building). Give a rate or a half-life to set the two apart."
    : "";
}

function renameShifter(side, from, to) {
  if (!to || to === from) return;
  const shifters = state.request.market[side].shifters;
  const renamed = {};
  for (const [k, v] of Object.entries(shifters)) renamed[k === from ? to : k] = v;
  state.request.market[side].shifters = renamed;
  for (const s of state.request.shocks || []) if (s.shifter === from) s.shifter = to;
  renderForm(state.request);
}

// A choice that changes which fields exist (a policy's kind, a shock's profile, the schedule).
function restructure(pointer, key) {
  const parent = pointer.split("/").slice(0, -1).join("/");
  const obj = getAt(state.request, parent);
  const price = Number(getAt(state.request, "/market/price")) || 100;
  const quantity = Number(getAt(state.request, "/market/quantity")) || 1000;
  const round = (x) => Number(x.toPrecision(3));
  if (key === "policies.kind") {
    for (const k of ["level", "growth", "amount", "rate", "coverage", "new_homes", "vacancy_decontrol", "indexed"]) delete obj[k];
    Object.assign(obj, { price_ceiling: { level: "base" }, price_floor: { level: round(price * 1.1) },
      quantity_cap: { level: round(quantity * 0.98) }, unit_tax: { amount: round(price * 0.05) },
      unit_subsidy: { amount: round(price * 0.05) }, ad_valorem_tax: { rate: 0.05 }, none: {} }[obj.kind]);
  } else if (key === "shocks.profile") {
    for (const k of ["change", "rate", "values", "periods", "start"]) delete obj[k];
    Object.assign(obj, { step: { change: 0.05 }, ramp: { change: 0.05, periods: 3 }, growth: { rate: 0.02 }, path: { values: [0.05] } }[obj.profile]);
  } else if (key === "adjustment.schedule") {
    state.request.adjustment = { schedule: obj.schedule, ...{ linear: { periods: 8 }, geometric: {}, explicit: { elasticities: [0.1, 0.5, 1.0] }, stock: {} }[obj.schedule] };
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

function declaredShifters() {
  const m = state.request.market || {};
  return [...Object.keys(m.demand?.shifters || {}), ...Object.keys(m.supply?.shifters || {})];
}

function addShock() {
  const declared = declaredShifters();
  if (!declared.length) {
    $("other-errors").textContent = "Add a demand or supply shifter first: a shock moves a shifter.";
    return;
  }
  (state.request.shocks = state.request.shocks || []).push({ shifter: declared[0], profile: "step", change: 0.05, start: 1 });
  renderForm(state.request);
  $("shock-fields").lastElementChild.querySelector("select").focus();
}

function addShifter(side) {
  const curve = (state.request.market[side] = state.request.market[side] || {});
  const shifters = (curve.shifters = curve.shifters || {});
  let n = 1;
  while (`${side}_shifter_${n}` in shifters) n += 1;
  shifters[`${side}_shifter_${n}`] = side === "demand" ? 1.0 : -0.5;
  renderForm(state.request);
  const rename = document.querySelector(`[data-rename="/market/${side}/shifters/${side}_shifter_${n}"]`);
  if (rename) rename.focus();
}

function syncJson() {
  $("request-json").value = JSON.stringify(state.request, null, 2);
  state.rendered = JSON.stringify(state.request);
  couplingNote();
}

function hasDistribution(value) {
  if (value == null || typeof value !== "object") return false;
  if (!Array.isArray(value) && "distribution" in value) return true;
  return Object.values(value).some(hasDistribution);
}

// The request decides the endpoint: distributions or band settings make it a bands request.
function endpointFor(request) {
  return BAND_KEYS.some((k) => k in request) || hasDistribution(request.market) || hasDistribution(request.adjustment)
    || (request.policies || []).some(hasDistribution) ? "/v1/bands" : "/v1/paths";
}

// The /v1/paths request of a bands request: every distribution at its central value.
function centralRequest(request) {
  const copy = JSON.parse(JSON.stringify(request));
  for (const k of BAND_KEYS) delete copy[k];
  const walk = (o) => {
    for (const [k, v] of Object.entries(o)) {
      if (v && typeof v === "object" && !Array.isArray(v)) {
        if ("distribution" in v) o[k] = centralOf(v); else walk(v);
      }
    }
  };
  walk(copy);
  return copy;
}

function sensitivityRequest(request) {
  const copy = JSON.parse(JSON.stringify(request));
  for (const k of ["draws", "seed", "percentiles"]) delete copy[k];
  return copy;
}

// --- values that look like mistakes are questioned before a run -----------------------------

function questions(request) {
  const out = [];
  const check = (pointer, value, test, message) => {
    if (typeof value === "number" && test(value)) out.push({ pointer, message: message(value) });
  };
  const pct = (v) => `${Number((v * 100).toPrecision(4))} %`;
  const inflation = request.market?.inflation;
  for (const [i, v] of (Array.isArray(inflation) ? inflation : [inflation]).entries()) {
    check(Array.isArray(inflation) ? `/market/inflation/${i}` : "/market/inflation", v, (x) => x > 0.5 || x < -0.2,
      (x) => `inflation of ${pct(x)} a period is implausible (did you mean ${x}% = ${Number((x / 100).toPrecision(6))}?)`);
  }
  (request.shocks || []).forEach((s, i) => {
    check(`/shocks/${i}/change`, s.change, (x) => Math.abs(x) > 1, (x) => `a real change of ${pct(x)} (write 0.1 or 10 % for ten percent)`);
    check(`/shocks/${i}/rate`, s.rate, (x) => Math.abs(x) > 0.2, (x) => `real growth of ${pct(x)} a period (write 0.02 or 2 % for two percent)`);
  });
  (request.policies || []).forEach((p, i) => {
    check(`/policies/${i}/growth`, p.growth, (x) => x > 0.3, (x) => `a cap of ${pct(x)} a period on rent rises (write 0.03 or 3 %)`);
    check(`/policies/${i}/coverage`, p.coverage, (x) => x > 1, (x) => `a coverage of ${pct(x)} of the homes (write 0.4 or 40 % for two homes in five)`);
  });
  const adjustment = request.adjustment || {};
  check("/adjustment/depreciation", adjustment.depreciation, (x) => x > 0.2, (x) => `${pct(x)} of the homes lost each period (write 0.01 or 1 % for one percent)`);
  check("/adjustment/conversion", adjustment.conversion, (x) => x > 1, (x) => `a conversion rate of ${x} (published estimates are a few hundredths, e.g. 0.02)`);
  // Thousands written with points ("1.350", "82.000") read as decimals: 1.35 and 82.
  for (const pointer of ["/market/price", "/market/quantity"]) {
    const typed = document.querySelector(`[data-pointer="${pointer}"]`)?.value.trim() || "";
    if (/^\d{1,3}(\.\d{3})+$/.test(typed)) {
      out.push({ pointer, message: `${typed} is read as ${Number(typed)}; for ${typed.replace(/\./g, ",")} write ${typed.replace(/\./g, "")}` });
    }
  }
  const rate = request.welfare?.discount_rate;
  check("/welfare/discount_rate", rate, (x) => x > 0.2, (x) => `a real discount rate of ${pct(x)} a period (write 0.03 or 3 %)`);
  const elasticity = (pointer) => {
    const v = getAt(request, pointer);
    check(pointer, v, (x) => Math.abs(x) > 5, (x) => `an elasticity of ${x} is far outside published housing estimates (about -1 to 0 for demand, 0 to 5 for supply)`);
  };
  ["/market/demand/price_elasticity", "/market/supply/short_run_elasticity", "/market/supply/long_run_elasticity"].forEach(elasticity);
  check("/horizon", request.horizon, (x) => x > 200, (x) => `a horizon of ${x} periods`);
  return out;
}

// --- errors --------------------------------------------------------------------------------

function clearErrors() {
  for (const e of document.querySelectorAll(".error")) e.remove();
  for (const input of document.querySelectorAll("[aria-invalid]")) {
    input.removeAttribute("aria-invalid");
    if (input.dataset.hint) input.setAttribute("aria-describedby", input.dataset.hint);
    else input.removeAttribute("aria-describedby");
  }
  $("other-errors").replaceChildren();
}

function markField(pointer, message, n) {
  const input = document.querySelector(`[data-pointer="${CSS.escape(pointer)}"]`);
  if (!input || input.disabled) return false;
  const p = document.createElement("p");
  p.className = "error";
  p.id = `error-${n}`;
  p.textContent = message;
  input.after(p);
  input.setAttribute("aria-invalid", "true");
  input.setAttribute("aria-describedby", input.dataset.hint ? `${p.id} ${input.dataset.hint}` : p.id);
  return true;
}

function showProblem(problem) {
  const rest = [];
  const errors = problem.errors || [{ pointer: "", message: problem.detail }];
  errors.forEach((err, n) => {
    if (!markField(err.pointer, err.message, n)) rest.push(`${err.pointer || "/"}: ${err.message}`);
  });
  if (rest.length) {
    const list = document.createElement("ul");
    for (const text of rest) { const li = document.createElement("li"); li.textContent = text; list.append(li); }
    $("other-errors").append(`${problem.title}:`, list);
  }
  const first = document.querySelector("[aria-invalid='true']");
  if (first) first.focus();
  // Where every message stands next to its field, the status says so in words (the service's
  // detail names fields by their place in the request: "/horizon: Must be ...").
  const marked = errors.length - rest.length;
  $("status").textContent = problem.status === 401 ? `Not run. ${NEEDS_KEY}`
    : marked && !rest.length ? `Not run: ${marked === 1 ? "one value needs" : `${marked} values need`} a change, each marked next to its field.`
      : `Not run: ${problem.detail}`;
}

// --- results -------------------------------------------------------------------------------

function flatten(obj, skip = ["name", "kind"]) {
  const out = {};
  for (const [k, v] of Object.entries(obj)) {
    if (skip.includes(k)) continue;
    if (v && typeof v === "object" && !Array.isArray(v)) for (const [i, w] of Object.entries(v)) out[`${k}.${i}`] = w;
    else out[k] = v;
  }
  return out;
}

function th(text, unit, scope = "col") {
  const cell = document.createElement("th");
  cell.scope = scope;
  cell.textContent = text;
  if (unit) { const span = document.createElement("span"); span.className = "unit"; span.textContent = unit; cell.append(span); }
  return cell;
}

function td(text, cls) {
  const cell = document.createElement("td");
  cell.textContent = text;
  if (cls) cell.className = cls;
  return cell;
}

const pathsOf = (body) => (body.central ? body.central : body);

// The band summary's key of a flattened summary key (group totals are total_<group> there).
// A band summary names a nested figure of the answer's summary by the engine's flat name
// (labels.FLAT_NAMES); figures of the other curve form have no band.
function bandFigure(band, key) {
  if (band.summary[key]) return band.summary[key];
  const found = state.labels.flat_names.find(([nested]) => key.startsWith(nested));
  return found ? band.summary[found[1] + key.slice(found[0].length)] : undefined;
}

// The range beside one summary figure of a bands run. The answer bands each group's total summed
// and discounted; government revenue is the government group's total (efficient rationing,
// MODEL.md 15); renters' and owners' totals add groups whose spreads do not add.
function summaryRange(band, key, scale) {
  const found = bandFigure(band, key);
  if (found) return bandRange(found, scale);
  if (key === "total_government_revenue" && band.summary.total_government) return bandRange(band.summary.total_government, scale);
  if ((key === "total_consumer_surplus_change" || key === "total_producer_surplus_change") && band.summary.total_government) {
    return rangeNote("spread: see each group below");
  }
  return null;
}

// The summary: a row per total the answer carries, a column per policy (never too wide).
function showSummary(body) {
  const answer = pathsOf(body);
  const table = $("summary");
  const head = document.createElement("tr");
  head.append(th("Figure"), ...answer.summary.map((s) => th(s.name)));
  table.tHead.replaceChildren(head);
  const flats = answer.summary.map((s) => flatten(s));
  const keys = [...new Set(flats.flatMap((f) => Object.keys(f)))];
  const tbody = table.tBodies[0];
  tbody.replaceChildren();
  const request = state.answer?.request;
  const scales = scalesOf(request, answer.periods.length);
  for (const key of keys) {
    const tr = document.createElement("tr");
    tr.dataset.figure = key;
    tr.append(th(labelOf(key, true), unitOf(key, true), "row"));
    const scale = scaleOf(key, true, scales);
    flats.forEach((f, i) => {
      const cell = td(number(f[key], scale), "n");
      const range = body.bands && summaryRange(body.bands[i], key, scale);
      if (range) cell.append(range);
      tr.append(cell);
    });
    tbody.append(tr);
  }
  if (body.bands) {
    // How many draws each policy's spread rests on, and how often it binds: a draw the policy
    // makes infeasible is left out of its bands, and the reader must know how many were.
    const rows = [
      ["bands_draws", `Draws in the spread (of ${fmt.format(body.draws)})`, (b) => {
        const left = b.infeasible_draws;
        return `${fmt.format(body.draws - left)}${left ? ` (${fmt.format(left)} left out: the policy makes them infeasible)` : ""}`;
      }],
      ["bands_binding_share", "Share of draws in which the policy binds", (b) => `${(100 * b.binding_share).toFixed(0)} %`],
    ];
    for (const [key, label, text] of rows) {
      const tr = document.createElement("tr");
      tr.dataset.figure = key;
      tr.append(th(label, "", "row"), ...body.bands.map((b) => td(text(b), "n")));
      tbody.append(tr);
    }
  }
  table.caption.textContent = body.bands
    ? `Per policy over ${answer.periods.length - 1} ${units().period}s, at the central values, with the spread over ${fmt.format(body.draws)} draws`
    : `Per policy over ${answer.periods.length - 1} ${units().period}s`;
  table.hidden = false;
}

// Discount factors of the request: prod_(u<=t) 1/(1+r_u), 1 in period 0 (steps: a rate through
// its period, the last one after), as the engine and the who-gains chart weigh the periods.
function discountFactors(request, periods) {
  const rate = request.welfare?.discount_rate ?? 0;
  const rateAt = (t) => {
    if (!Array.isArray(rate)) return rate;
    const step = rate.find((s) => t <= s.through_period);
    return (step || rate[rate.length - 1]).rate;
  };
  const out = [1];
  for (let t = 1; t < periods; t += 1) out.push(out[t - 1] / (1 + rateAt(t)));
  return out;
}

function discounting(request) {
  const rate = request.welfare?.discount_rate ?? 0;
  const period = units().period;
  if (Array.isArray(rate)) return `discounted per ${period} at the request's steps`;
  return rate === 0 ? "not discounted" : `discounted at ${Number((rate * 100).toPrecision(3))} % per ${period}`;
}

// Who gains and who loses, on the chart's basis: summed over periods 1..T and discounted.
function showGroups(body, request) {
  const answer = pathsOf(body);
  const table = $("groups");
  if (!answer.paths.every((p) => p.distribution)) {
    const head = document.createElement("tr");
    head.append(th("Group"), ...answer.paths.map((p) => th(p.name)));
    table.tHead.replaceChildren(head);
    const row = document.createElement("tr");
    row.append(th("Every group", "", "row"), ...answer.paths.map(() => td("not reported under random rationing", "absent")));
    table.tBodies[0].replaceChildren(row);
    table.caption.textContent = "Who gains and who loses is not reported under random rationing: the model does not track which households are drawn for a controlled home.";
    table.hidden = false;
    return;
  }
  const factors = discountFactors(request, answer.periods.length);
  const groups = Object.keys(answer.paths[0].distribution);
  const head = document.createElement("tr");
  head.append(th("Group"), ...answer.paths.map((p) => th(p.name)));
  table.tHead.replaceChildren(head);
  const tbody = table.tBodies[0];
  tbody.replaceChildren();
  const sums = answer.paths.map((p) => groups.map((g) => p.distribution[g].reduce((acc, v, t) => acc + v * factors[t], 0)));
  const scale = scalesOf(request, answer.periods.length).money;
  // With bands: each group's spread, on the table's own basis (the answer bands each group's
  // total discounted as well as summed). The net is minus the discounted value lost.
  const bands = body.bands || null;
  const groupRange = (i, g) => {
    const band = bands?.[i].summary[`discounted_${g}`];
    return band ? bandRange(band, scale) : null;
  };
  const netRange = (i) => {
    const band = bands?.[i].summary.discounted_deadweight_loss;
    if (!band) return null;
    const qs = bandKeys(band);
    // The band of minus the loss: its low is minus the loss's high (percentiles in pairs).
    return Number(qs[0]) + Number(qs[qs.length - 1]) === 100 ? bandRange(band, scale, { flip: true }) : null;
  };
  const cell = (text, range) => {
    const c = td(text, "n");
    if (range) c.append(...[range].flat());
    return c;
  };
  groups.forEach((g, j) => {
    const tr = document.createElement("tr");
    tr.dataset.group = g;
    tr.append(th(labelOf(`distribution.${g}`), "", "row"), ...sums.map((row, i) => cell(signed(row[j], scale), groupRange(i, g))));
    tbody.append(tr);
  });
  const net = document.createElement("tr");
  net.dataset.total = "net";
  net.append(th("Net (minus the value lost)", "", "row"), ...sums.map((row, i) => cell(signed(row.reduce((a, b) => a + b, 0), scale), netRange(i))));
  tbody.append(net);
  const u = units();
  const spread = !bands ? ""
    : `; below each figure its spread over ${fmt.format(body.draws)} draws (the net's: minus the value lost's)`;
  table.caption.textContent = `Who gains (+) and who loses (\u2212): each group against the free market of the same ${u.period}, total over ${u.period}s 1 to ${answer.periods.length - 1}, ${discounting(request)} (the same basis as the chart), assuming efficient allocation; ${u.currency}, ${state.labels.real}${spread}`;
  table.hidden = false;
}

function showYears(body) {
  const answer = pathsOf(body);
  const all = $("all-series").checked;
  const box = $("year-tables");
  box.replaceChildren();
  const firstRule = Math.max(0, answer.paths.findIndex((p) => p.kind !== "none"));
  const scales = scalesOf(state.answer?.request, answer.periods.length);
  answer.paths.forEach((path, i) => {
    const series = {
      ...(answer.price_index ? { price_index: answer.price_index } : {}),
      ...(answer.supply_elasticity ? { supply_elasticity: answer.supply_elasticity } : {}),
      ...flatten(path),
    };
    const names = Object.keys(series).filter((k) => Array.isArray(series[k]) && (all || YEAR_COLUMNS.includes(k)));
    names.sort((a, b) => (all ? 0 : YEAR_COLUMNS.indexOf(a) - YEAR_COLUMNS.indexOf(b)));
    const details = document.createElement("details");
    details.open = i === firstRule;  // the first policy that is a rule, not the free market
    const summary = document.createElement("summary");
    summary.textContent = `${path.name}: ${units().period}s 0 (today) to ${answer.periods.length - 1}`;
    const scroll = document.createElement("div");
    scroll.className = "table-scroll";
    const table = document.createElement("table");
    table.className = "years";
    table.dataset.policy = path.name;
    const head = document.createElement("tr");
    head.append(th(`Period (${units().period})`), ...names.map((n) => th(labelOf(n), unitOf(n))));
    table.createTHead().append(head);
    const tbody = table.createTBody();
    const scale = names.map((n) => scaleOf(n, false, scales));
    answer.periods.forEach((t, row) => {
      const tr = document.createElement("tr");
      // A flag (binding) as its unit says, 1 = yes, 0 = no, like the CSV and the workbook.
      const cell = (v, k) => (typeof v === "boolean" ? (v ? "1" : "0") : number(v, scale[k]));
      tr.append(th(String(t), "", "row"), ...names.map((n, k) => td(cell(series[n][row], k), "n")));
      tbody.append(tr);
    });
    scroll.append(table);
    details.append(summary, scroll);
    box.append(details);
  });
  $("years").hidden = false;
}

// --- charts: each with its own title and PNG and SVG downloads ---------------------------------

function scenarioName() {
  return $("scenario-name").value.trim();
}

// The service refuses a chart or briefing title over 120 characters (MAX_CHART_TITLE_LENGTH):
// a longer one is cut, so that a long name or policy name never stops a chart being drawn.
const TITLE_LIMIT = 120;
const shortened = (text) => (text.length <= TITLE_LIMIT ? text : `${text.slice(0, TITLE_LIMIT - 1)}…`);

function titled(text) {
  const name = scenarioName();
  return shortened(name ? `${name}: ${text}` : text);
}

// The charts on the page drawn again under the scenario's name as it now is (typed, or saved
// under another name in the library), each with its panel, and the downloads named after it.
function retitleCharts() {
  for (const fig of document.querySelectorAll("figure")) if (fig.retitle) fig.retitle();
  const name = slug(scenarioName());
  for (const [id, suffix] of [["download-json", ".json"], ["download-csv", ".csv"], ["download-csv-wide", "-wide.csv"]]) {
    if ($(id).getAttribute("href") !== "#") $(id).download = `${name}${suffix}`;
  }
}

function download(url, filename) {
  const a = document.createElement("a");
  a.href = url;
  a.download = filename;
  document.body.append(a);
  a.click();
  a.remove();
}

function blobUrl(blob) {
  const url = URL.createObjectURL(blob);
  state.urls.push(url);
  return url;
}

const slug = (text) => (text || "scenario").toLowerCase().replace(/[^a-z0-9]+/g, "-").replace(/^-|-$/g, "").slice(0, 60) || "scenario";

async function chartImage(spec, format) {
  const response = await call("/v1/charts", {
    method: "POST", headers: { "Content-Type": "application/json" },
    body: JSON.stringify({ ...spec, format, units: units() }),
  });
  if (!response.ok) throw new Error((await response.json()).detail);
  return response.blob();
}

// A figure: the chart of `spec` as SVG, a panel choice where it has panels, and its downloads.
// `spec.topic` says what it shows: its title is the scenario's name and the topic, worked out
// each time it is drawn, so that a name typed or saved later retitles the charts already on
// the page (retitleCharts) with the panel chosen kept.
function figure(id, spec, caption, panels = null, container = $("charts")) {
  const fig = document.createElement("figure");
  fig.id = id;
  const img = document.createElement("img");
  img.alt = caption;
  img.width = 1200;
  img.height = 900;
  const cap = document.createElement("figcaption");
  cap.textContent = caption;
  const row = document.createElement("div");
  row.className = "row chart-tools";
  let current = { ...spec };
  const drawn = () => {
    const { topic, ...rest } = current;
    return topic === undefined ? rest : { ...rest, title: titled(topic) };
  };
  // Each drawing is numbered: one that finishes after a later one started (a retitle while
  // the first drawing, a panel chosen meanwhile) is dropped, so the newest choice shows.
  let drawing = 0;
  const draw = async () => {
    const number = ++drawing;
    try {
      const chart = drawn();
      const url = blobUrl(await chartImage(chart, "svg"));
      if (number !== drawing) return;
      await new Promise((resolve) => { img.onload = resolve; img.onerror = resolve; img.src = url; });
      img.dataset.scenario = $("results").dataset.scenario;
      img.dataset.title = chart.title;
      cap.textContent = caption;
    } catch (e) {
      if (number === drawing) cap.textContent = `${caption} (not drawn: ${e.message})`;
    }
  };
  // Drawn again only when its title would change (each drawing asks the chart service).
  fig.retitle = () => (drawn().title === img.dataset.title ? null : draw());
  if (panels && panels.length > 1) {
    const select = document.createElement("select");
    select.id = `${id}-panel`;
    const label = document.createElement("label");
    label.htmlFor = select.id;
    label.textContent = "Show";
    for (const [v, text] of [["", "every panel"], ...panels.map((p) => [p, p === "controlled_and_uncontrolled_rents" ? "rents of controlled and uncontrolled homes" : labelOf(p)])]) {
      const o = document.createElement("option");
      o.value = v;
      o.textContent = text;
      select.append(o);
    }
    select.addEventListener("change", () => {
      current = select.value
        ? { ...spec, panels: [select.value], topic: select.selectedOptions[0].textContent }
        : { ...spec };
      draw();
    });
    row.append(label, select);
  }
  for (const format of ["png", "svg"]) {
    row.append(button(`Download ${format.toUpperCase()}`, `${id}-${format}`, async () => {
      const chart = drawn();
      const blob = await chartImage(chart, format);
      download(blobUrl(blob), `${slug(chart.title)}.${format}`);
    }, "secondary"));
  }
  fig.append(img, cap, row);
  container.append(fig);
  return draw();
}

// The panels of the paths chart that this answer carries (as the chart service would choose).
function availablePanels(answer) {
  const carries = (n) => answer.paths.every((p) => Array.isArray(flatten(p)[n]));
  const out = ["consumer_price", "nominal_consumer_price"].filter(carries);
  if (answer.paths.some((p) => p.covered_price && p.uncovered_price)) out.push("controlled_and_uncontrolled_rents");
  return [...out, ...["quantity", "homes_below_free_path", "vacant_homes", "converted_homes", "shortage", "vs_free_path.renters", "cumulative_deadweight_loss"].filter(carries)];
}

// What a band chart's marks are, worded from the percentiles asked for in the chart key's own
// words (service/labels.py BAND_KEY, as charts.band_key draws them): the outer pair shaded, each
// pair inside it darker, the line.
function bandKeyWords(percentiles, draws) {
  const key = state.labels.band_key;
  const qs = [...percentiles].sort((a, b) => a - b);
  const pairs = qs.slice(0, Math.floor(qs.length / 2)).map((q, d) => [q, qs[qs.length - 1 - d]]);
  const fill = (text, lo, hi) => text.replaceAll("{low}", ordinal(lo)).replaceAll("{high}", ordinal(hi)).replaceAll("{draws}", fmt.format(draws));
  const words = [...pairs.map(([lo, hi], d) => fill(d === 0 ? key.outer : key.inner[Math.min(d, 2) - 1], lo, hi)), key.line];
  return words.map((w, i) => (i === 0 ? w[0].toUpperCase() + w.slice(1) : w)).join("; ");
}

async function drawCharts(body, request) {
  $("charts").replaceChildren();
  const answer = pathsOf(body);
  const bands = state.endpoint === "/v1/bands";
  const paths = bands ? centralRequest(request) : request;
  const jobs = [];
  const panels = availablePanels(answer);
  // The caption names what "every panel" draws: the chart service's default panels that this
  // answer carries; the others (homes standing empty, renters against the free path...) are
  // in the "Show" choice.
  const drawn = panels.filter((p) => state.labels.default_panels.includes(p));
  jobs.push(figure("chart-figure", { chart: bands ? "bands" : "paths", scenario: request, topic: bands ? "central paths with percentile bands" : "paths by policy" },
    `${drawn.map((p) => (p === "controlled_and_uncontrolled_rents" ? "rents of controlled and uncontrolled homes" : labelOf(p, false).split(" (")[0])).join(", ")} over the periods, one line per policy.${bands ? ` ${bandKeyWords(body.percentiles, body.draws)}.` : ""} Money in ${state.labels.real} unless a panel says ${state.labels.nominal}.`,
    panels));
  if (answer.paths.every((p) => p.distribution)) {
    jobs.push(figure("gains-figure", { chart: "gains_and_losses", scenario: paths, topic: "who gains and who loses" },
      `Who gains and who loses: each group against the free market of the same ${units().period}, total over ${units().period}s 1 to ${answer.periods.length - 1}, ${discounting(request)}; the table below is on the same basis.`));
  }
  if (answer.paths.some((p) => p.vs_free_path)) {
    jobs.push(figure("renters-figure", { chart: "renters_vs_free_path", scenario: paths, topic: "renters against the free path" },
      "Renters' gain or loss against the free market path, per period: while the rule lasts and after it ends."));
  }
  await Promise.all(jobs);
}

// --- sensitivity -----------------------------------------------------------------------------

const HEADLINE_WORDS = { discounted_deadweight_loss: "discounted_deadweight_loss", final_consumer_price: "final_consumer_price",
  peak_shortage: "peak_shortage" };

function headlineLabel(name) {
  if (HEADLINE_WORDS[name] || state.labels.totals[name]) return labelOf(name, true);
  if (name.startsWith("total_")) return labelOf(`distribution_totals.${name.slice(6)}`, true);
  if (state.labels.totals[`vs_free_path_totals.${name}`]) return labelOf(`vs_free_path_totals.${name}`, true);
  return labelOf(name, true);
}

async function runSensitivity(request) {
  const section = $("sensitivity");
  const sens = sensitivityRequest(request);
  const response = await call("/v1/sensitivity", { method: "POST", headers: { "Content-Type": "application/json" }, body: JSON.stringify(sens) });
  if (!response.ok) { section.hidden = true; return; }
  const body = await response.json();
  state.sensitivity = { body, request: sens };
  const output = $("tornado-output");
  const preferred = ["discounted_deadweight_loss", "final_consumer_price", "final_homes_below_free_path", "renters_discounted"];
  const order = [...preferred.filter((h) => body.headlines.includes(h)), ...body.headlines.filter((h) => !preferred.includes(h))];
  output.replaceChildren(...order.map((h) => { const o = document.createElement("option"); o.value = h; o.textContent = headlineLabel(h); return o; }));
  const policy = $("tornado-policy");
  const names = body.central.paths.map((p) => p.name);
  policy.replaceChildren(...names.map((n) => { const o = document.createElement("option"); o.value = n; o.textContent = n; return o; }));
  // Open on the policy whose first figure swings most (a rule that loses nothing draws an empty
  // tornado); ties and no swing at all: the first rule.
  const swingOf = (name) => Math.max(0, ...body.inputs.map((e) => (e.policies.find((q) => q.name === name)?.swing?.[order[0]]) || 0));
  const firstRule = names.find((n, i) => body.central.paths[i].kind !== "none") || names[0];
  policy.value = names.reduce((best, n) => (swingOf(n) > swingOf(best) ? n : best), firstRule);
  const caution = $("sensitivity-caution");
  const a = request.adjustment || {};
  const coupled = (a.schedule === "geometric" || a.schedule === "stock") && a.rate == null && a.half_life == null
    && hasDistribution(request.market?.supply?.long_run_elasticity);
  const engineSays = body.cautions.find((c) => /slower building|building speed/i.test(c));
  caution.hidden = !(coupled || engineSays);
  caution.textContent = engineSays || (coupled
    ? "The long-run supply elasticity is uncertain and the adjustment rate is left to its default (short-run / long-run): a larger long-run elasticity then also means slower building, so its swing mixes the two. Give a rate or a half-life to vary them apart."
    : "");
  section.hidden = false;
  await drawTornado();
}

async function drawTornado() {
  const { request } = state.sensitivity;
  const output = $("tornado-output").value;
  const policy = $("tornado-policy").value;
  const box = $("tornado-chart");
  box.replaceChildren();
  await figure("tornado-figure", { chart: "sensitivity", scenario: request, output, policy, topic: `what moves ${headlineLabel(output).split(" (")[0].toLowerCase()} under ${policy}` },
    `Each input alone at its low and high, every other input at its central value; bar ends show ${headlineLabel(output)}.`, null, box);
}

// --- a run -----------------------------------------------------------------------------------

function requestFromForm() {
  try {
    return JSON.parse($("request-json").value);
  } catch (e) {
    throw new Error(`The whole request is not valid JSON: ${e.message}`);
  }
}

async function run(event) {
  event.preventDefault();
  flushJson();
  clearErrors();
  let request;
  try {
    request = requestFromForm();
  } catch (e) {
    $("other-errors").textContent = e.message;
    return;
  }
  const asked = questions(request);
  if (asked.length) {
    const ok = window.confirm(`These values look implausible:\n\n${asked.map((q) => `\u2022 ${q.message}`).join("\n")}\n\nRun anyway?`);
    if (!ok) {
      asked.forEach((q, n) => markField(q.pointer, `Questioned: ${q.message}.`, `q${n}`));
      $("status").textContent = "Not run: check the values questioned, or confirm them.";
      return;
    }
  }
  // Nothing from an earlier run may stand next to this one's numbers.
  $("status").textContent = "Running...";
  delete $("results").dataset.drawn;  // set again once this run's charts are drawn
  for (const id of ["summary", "groups", "downloads", "sensitivity", "years"]) $(id).hidden = true;
  $("charts").replaceChildren();
  $("tornado-chart").replaceChildren();
  for (const url of state.urls) URL.revokeObjectURL(url);
  state.urls = [];
  state.endpoint = endpointFor(request);
  const response = await call(state.endpoint, { method: "POST", headers: { "Content-Type": "application/json" }, body: JSON.stringify(request) });
  const text = await response.text();
  const body = JSON.parse(text);
  if (!response.ok) { showProblem(body); return; }
  state.answer = { body, request };
  $("results").dataset.scenario = body.scenario_id;
  $("results").dataset.endpoint = state.endpoint;
  showTables();
  $("cautions").replaceChildren(...body.cautions.map((c) => { const li = document.createElement("li"); li.textContent = c; return li; }));
  $("cautions-heading").hidden = false;
  $("download-json").href = blobUrl(new Blob([text], { type: "application/json" }));
  $("download-json").download = `${slug(scenarioName())}.json`;
  $("downloads").hidden = false;
  const periods = pathsOf(body).periods.length - 1;
  const policies = pathsOf(body).summary.length;
  const bands = state.endpoint === "/v1/bands";
  $("status").textContent = `Computed ${policies} policies over ${periods} ${units().period}s${bands ? ` and ${fmt.format(body.draws)} draws` : ""}.`;
  // The results start below the form and the library: bring them into view.
  $("results-heading").scrollIntoView({ block: "start" });
  const jobs = [drawCharts(body, request), csvLink(request)];
  if (bands) jobs.push(runSensitivity(request));
  await Promise.all(jobs);
  $("results").dataset.drawn = body.scenario_id;
}

// The reduced form: per shifter, d ln P*/d ln x and d ln Q*/d ln x in the first period and
// in the long run, read as "percent per 1 %".
function showReducedForm(body) {
  const answer = pathsOf(body);
  const table = $("reduced-form");
  const shifters = Object.entries(answer.reduced_form || {});
  table.hidden = shifters.length === 0;
  const head = document.createElement("tr");
  head.append(th("Shifter"), th("Rent, first period", "% per 1 %"), th("Rent, long run", "% per 1 %"),
    th("Homes let, first period", "% per 1 %"), th("Homes let, long run", "% per 1 %"));
  table.tHead.replaceChildren(head);
  table.tBodies[0].replaceChildren(...shifters.map(([name, rf]) => {
    const tr = document.createElement("tr");
    tr.dataset.shifter = name;
    tr.append(th(name.replace(/_/g, " "), "", "row"), ...[rf.short_run.price, rf.long_run.price, rf.short_run.quantity,
      rf.long_run.quantity].map((v) => td(signed(v), "n")));
    return tr;
  }));
}

function showTables() {
  if (!state.answer) return;
  const { body, request } = state.answer;
  showSummary(body);
  showGroups(body, request);
  showReducedForm(body);
  showYears(body);
}

// The CSV downloads: the long form (one value per row, its unit beside it) and the wide form a
// spreadsheet reads as a table (one row per policy and period, a column per variable, or per
// variable and percentile for bands: `?layout=wide`).
async function csvLink(request) {
  const post = (layout) => call(`${state.endpoint}${layout ? `?layout=${layout}` : ""}`,
    { method: "POST", headers: { "Content-Type": "application/json", Accept: "text/csv" }, body: JSON.stringify(request) });
  $("download-csv-wide").hidden = true;
  const [long, table] = await Promise.all([post(""), post("wide")]);
  if (long.ok) {
    $("download-csv").href = blobUrl(await long.blob());
    $("download-csv").download = `${slug(scenarioName())}.csv`;
  }
  if (table && table.ok) {
    $("download-csv-wide").href = blobUrl(await table.blob());
    $("download-csv-wide").download = `${slug(scenarioName())}-wide.csv`;
    $("download-csv-wide").hidden = false;
  }
}

const XLSX = "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet";

async function downloadWorkbook() {
  const { request } = state.answer;
  const response = await call(state.endpoint, { method: "POST", headers: { "Content-Type": "application/json", Accept: XLSX }, body: JSON.stringify(request) });
  if (!response.ok) { $("status").textContent = response.status === 401 ? NEEDS_KEY : `No workbook: ${(await response.json()).detail}`; return; }
  download(blobUrl(await response.blob()), `${slug(scenarioName())}.xlsx`);
}

async function downloadBriefing() {
  // A bands request is briefed as it is: its central answer and how uncertain it is.
  const body = { ...state.answer.request, units: units() };
  if (scenarioName()) body.title = shortened(scenarioName());
  const response = await call("/v1/briefing", { method: "POST", headers: { "Content-Type": "application/json" }, body: JSON.stringify(body) });
  if (!response.ok) { $("status").textContent = response.status === 401 ? NEEDS_KEY : `No briefing: ${(await response.json()).detail}`; return; }
  download(blobUrl(await response.blob()), `${slug(scenarioName())}-briefing.html`);
}

// --- keeping and sharing: a file, or a link with the request in its fragment ----------------

function saveRequest() {
  flushJson();
  const blob = new Blob([`${JSON.stringify(state.request, null, 2)}\n`], { type: "application/json" });
  download(blobUrl(blob), `${slug(scenarioName())}-request.json`);
}

async function openFile(event) {
  const file = event.target.files[0];
  if (!file) return;
  try {
    const request = JSON.parse(await file.text());
    // An answer saved from this page carries its request: open that.
    const inner = request.request && request.scenario_id ? request.request : request;
    loadRequest(inner, file.name.replace(/\.json$/i, "").replace(/-request$/, ""));
    $("status").textContent = `Opened ${file.name}. Change inputs, then run it.`;
  } catch (e) {
    $("other-errors").textContent = `${file.name} is not a request: ${e.message}`;
  }
  event.target.value = "";
}

function loadRequest(request, name) {
  clearErrors();
  if (name != null) $("scenario-name").value = state.givenName = name;
  renderForm(request);
  updatePicker(request);
}

const toBase64Url = (bytes) => btoa(String.fromCharCode(...bytes)).replace(/\+/g, "-").replace(/\//g, "_").replace(/=+$/, "");
const fromBase64Url = (text) => Uint8Array.from(atob(text.replace(/-/g, "+").replace(/_/g, "/")), (c) => c.charCodeAt(0));

async function squeeze(text, direction) {
  const stream = new Blob([text]).stream().pipeThrough(direction === "in" ? new CompressionStream("deflate-raw") : new DecompressionStream("deflate-raw"));
  return new Uint8Array(await new Response(stream).arrayBuffer());
}

async function copyLink() {
  flushJson();
  // The units typed travel with the link, so a colleague's charts read as the analyst's did.
  const payload = JSON.stringify({ name: scenarioName(), request: state.request, units: typedUnits() });
  const bytes = await squeeze(payload, "in");
  let packed = "";
  for (let i = 0; i < bytes.length; i += 8192) packed += String.fromCharCode(...bytes.subarray(i, i + 8192));
  const fragment = `#s=${btoa(packed).replace(/\+/g, "-").replace(/\//g, "_").replace(/=+$/, "")}`;
  const url = `${location.origin}${location.pathname}${fragment}`;
  history.replaceState(null, "", fragment);
  let copied = false;
  try { await navigator.clipboard.writeText(url); copied = true; } catch (e) { copied = false; }
  const status = $("link-status");
  status.replaceChildren(copied ? "Link copied: it reopens this scenario. " : "Copy this link: ");
  const box = document.createElement("input");
  box.id = "scenario-link";
  box.readOnly = true;
  box.value = url;
  box.size = 40;
  box.setAttribute("aria-label", "Link to this scenario");
  status.append(box);
}

async function fromFragment() {
  const match = location.hash.match(/^#s=([A-Za-z0-9_-]+)$/);
  if (!match) return false;
  try {
    const text = new TextDecoder().decode(await squeeze(fromBase64Url(match[1]), "out"));
    const { name, request, units: linked } = JSON.parse(text);
    loadRequest(request, name || "");
    setUnits(linked || {}, { reset: false });
    $("status").textContent = "Opened the scenario of the link. Run it to see its paths.";
    return true;
  } catch (e) {
    $("other-errors").textContent = `The link does not hold a scenario (${e.message}).`;
    return false;
  }
}

// --- calls to the service ----------------------------------------------------------------------

// Where the library keeps the API key typed in its panel for this browser session (library.js).
const KEY_STORE = "shockpath-library-key";
const NEEDS_KEY = "This service needs an API key: enter yours in the scenario library's \"API key\" field (between the inputs and the results), then try again.";

// Every call to the service carries that key when one is given (a service with keys switched on
// answers 401 without it): the field once the library panel is built, the session's copy before.
function call(path, init = {}) {
  const field = $("lib-key");
  const key = (field ? field.value : sessionStorage.getItem(KEY_STORE) || "").trim();
  const headers = key ? { ...(init.headers || {}), Authorization: `Bearer ${key}` } : init.headers;
  return fetch(path, { ...init, headers });
}

// --- the demo picker and the JSON box ---------------------------------------------------------

async function loadDemo() {
  const name = $("demo").value;
  if (!name) return;
  const response = await call(`/v1/examples/${encodeURIComponent(name)}`);
  if (!response.ok) { $("status").textContent = response.status === 401 ? NEEDS_KEY : `Demo not loaded: the service answered ${response.status}.`; return; }
  const request = await response.json();
  state.demos[name] = JSON.stringify(request);
  loadRequest(request, state.titles[name].split(":")[0]);
  setUnits(state.demoUnits[name] || {}, { reset: false });  // the words the demo's numbers are in
  $("status").textContent = `Loaded ${name}. Change inputs, then run it.`;
}

// After a paste the picker names the demo the request is, or says it is the caller's own.
function updatePicker(request) {
  const text = JSON.stringify(request);
  const match = Object.keys(state.demos).find((name) => state.demos[name] === text);
  $("demo").value = match || "";
}

// The JSON box redraws the form as it is typed (after a pause) and when it loses focus; a redraw
// never replaces the form under a pointer that is pressing a button (see replayLostClick).
function fromJson() {
  clearTimeout(state.pending);
  state.pending = null;
  const text = $("request-json").value;
  let request;
  try { request = JSON.parse(text); } catch (e) { return; /* shown on run */ }
  if (JSON.stringify(request) === state.rendered) return;
  clearErrors();
  renderForm(request, true);
  updatePicker(request);
}

function flushJson() {
  if (state.pending) fromJson();
}

// A button pressed while the form is redrawn underneath it (the JSON box lost focus to that
// press) is pressed again once redrawn: no click is lost.
let pressed = null;
function rememberPress(event) {
  const target = event.target.closest("[data-action], button[id]");
  pressed = target ? { key: target.dataset.action || `#${target.id}`, element: target } : null;
}

// The press reached its button: its own click handler runs (and may redraw the form, as a
// remove does), so there is nothing to replay. Runs first, in the capture phase.
function noteClick(event) {
  if (pressed && pressed.element.contains(event.target)) pressed = null;
}

function replayLostClick(event) {
  if (!pressed) return;
  const { key, element } = pressed;
  pressed = null;
  if (element.isConnected) return;  // nothing was redrawn: the browser clicks as usual
  const again = key.startsWith("#") ? $(key.slice(1)) : document.querySelector(`[data-action="${CSS.escape(key)}"]`);
  if (again && again.isConnected) again.click();
}

async function start() {
  const [labelsResponse, examplesResponse] = await Promise.all([fetch("/ui/labels.json"), call("/v1/examples")]);
  state.labels = await labelsResponse.json();
  const select = $("demo");
  const own = document.createElement("option");
  own.value = "";
  own.textContent = "Your own request (pasted, opened or edited)";
  select.append(own);
  const examples = examplesResponse.ok ? (await examplesResponse.json()).examples : [];
  addDemos(examples);
  $("load-demo").addEventListener("click", loadDemo);
  $("add-policy").addEventListener("click", addPolicy);
  $("add-shock").addEventListener("click", addShock);
  $("add-demand-shifter").addEventListener("click", () => addShifter("demand"));
  $("add-supply-shifter").addEventListener("click", () => addShifter("supply"));
  $("scenario-form").addEventListener("submit", run);
  $("save-request").addEventListener("click", saveRequest);
  $("copy-link").addEventListener("click", copyLink);
  $("open-file").addEventListener("change", openFile);
  $("download-workbook").addEventListener("click", downloadWorkbook);
  $("download-briefing").addEventListener("click", downloadBriefing);
  $("tornado-output").addEventListener("change", drawTornado);
  $("tornado-policy").addEventListener("change", drawTornado);
  $("scenario-name").addEventListener("change", retitleCharts);
  $("all-series").addEventListener("change", () => state.answer && showYears(state.answer.body));
  for (const id of ["u-currency", "u-quantity", "u-unit", "u-interval", "u-period"]) $(id).addEventListener("change", showTables);
  const json = $("request-json");
  json.addEventListener("input", () => { clearTimeout(state.pending); state.pending = setTimeout(fromJson, 400); });
  json.addEventListener("paste", () => {
    // A request pasted over the whole box is another scenario: a name the page gave the one
    // before (a demo's, a file's) no longer titles it; a name the analyst typed stays.
    if (json.selectionStart !== 0 || json.selectionEnd !== json.value.length) return;
    if ($("scenario-name").value === state.givenName) $("scenario-name").value = state.givenName = "";
    $("status").textContent = "Pasted a request. Change inputs, then run it.";
  });
  json.addEventListener("change", fromJson);
  document.addEventListener("pointerdown", rememberPress, true);
  document.addEventListener("click", noteClick, true);
  document.addEventListener("pointerup", (event) => setTimeout(() => replayLostClick(event), 0), true);
  window.addEventListener("hashchange", fromFragment);
  if (examplesResponse.status === 401) {
    // A service with keys switched on: the demos come once a key is given.
    $("status").textContent = NEEDS_KEY;
    document.addEventListener("change", async function once(event) {
      if (event.target.id !== "lib-key") return;
      const again = await call("/v1/examples");
      if (!again.ok) return;
      document.removeEventListener("change", once);
      addDemos((await again.json()).examples);
      // What the analyst may have pasted meanwhile stays: the demos wait in the picker.
      $("status").textContent = "Key accepted: choose a demo and load it, or run your own request.";
    });
  }
  if (!(await fromFragment()) && examples.length) await loadDemo();
}

// The demos in the picker, the first chosen.
function addDemos(examples) {
  const select = $("demo");
  for (const e of examples) {
    const option = document.createElement("option");
    option.value = e.name;
    option.textContent = e.endpoint === "/v1/bands" ? `${e.title} (bands)` : e.title;
    state.titles[e.name] = e.title;
    state.demoUnits[e.name] = e.units || {};
    select.append(option);
  }
  if (examples.length) select.value = examples[0].name;
}

// Whether or not a demo could be loaded (a service that wants a key for /v1/examples too loads
// none), the page says when it has started: the library opens a linked scenario after that.
start().finally(() => {
  window.shockpathStarted = true;
  document.dispatchEvent(new Event("shockpath:started"));
});
