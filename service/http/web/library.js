// The scenario library on the page: save the request in the form, find and open saved ones,
// and a link that opens a scenario. Talks only to /v1/scenarios of this service. Reads and
// writes the request through the page's "Whole request (JSON)" textarea (#request-json):
// setting it and sending a "change" event redraws the form.
"use strict";

(() => {
  const el = (tag, attrs = {}, ...children) => {
    const node = document.createElement(tag);
    for (const [k, v] of Object.entries(attrs)) {
      if (k === "text") node.textContent = v;
      else if (v === true) node.setAttribute(k, "");
      else if (v !== false && v != null) node.setAttribute(k, v);
    }
    node.append(...children);
    return node;
  };
  // pending: a linked scenario not opened yet (the service asked for a key first).
  const lib = { current: null, cursor: null, query: "", pending: null };
  // A record's name is at most NAME_LIMIT characters (the service's MAX_SCENARIO_NAME_LENGTH);
  // a copy's name is cut to make room for its suffix.
  const NAME_LIMIT = 200;
  const COPY = " (copy)";
  const KEY_STORE = "shockpath-library-key";

  function field(id, label, input) {
    input.id = id;
    return el("div", { class: "field" }, el("label", { for: id, text: label }), input);
  }

  function build(root) {
    root.append(
      el("h2", { id: "library-heading", text: "Scenario library" }),
      el("p", { class: "hint", text: "Save the request above under a name, open a saved one, or copy a link that opens it. "
        + "A scenario is private to the key that saved it unless you share it: then every key of this service may read it, "
        + "and only yours may change it." }),
      el("div", { class: "grid" },
        field("lib-key", "API key (only if this service asks for one)", el("input", { type: "password", autocomplete: "off" }))),
      el("fieldset", {},
        el("legend", { text: "Save" }),
        el("div", { class: "grid" },
          field("lib-name", "Name", el("input", { maxlength: String(NAME_LIMIT) })),
          field("lib-tags", "Tags (comma-separated)", el("input", {})),
          el("div", { class: "field check" },
            el("input", { type: "checkbox", id: "lib-shared" }),
            el("label", { for: "lib-shared", text: "Shared: every key may read it" }))),
        field("lib-notes", "Notes", el("textarea", { rows: "3" })),
        el("div", { class: "row" },
          el("button", { type: "button", id: "lib-save", text: "Save as a new scenario" }),
          el("button", { type: "button", id: "lib-revise", text: "Save changes as a new revision", hidden: true }))),
      el("p", { id: "lib-status", role: "status" }),
      el("p", { id: "lib-share", hidden: true },
        el("label", { for: "lib-link", text: "Link that opens this scenario " }),
        el("input", { id: "lib-link", readonly: true, size: "60" }),
        " ",
        el("button", { type: "button", id: "lib-copy", text: "Copy link" })),
      // The open record's revisions (each change is one; the earlier ones stay readable) and,
      // for its owner, deleting it.
      el("div", { id: "lib-record", class: "row", hidden: true },
        el("label", { for: "lib-revision", text: "Revision" }),
        el("select", { id: "lib-revision" }),
        el("button", { type: "button", id: "lib-open-revision", class: "secondary", text: "Open this revision" }),
        el("button", { type: "button", id: "lib-delete", class: "secondary", text: "Delete this scenario", hidden: true })),
      el("fieldset", {},
        el("legend", { text: "Open" }),
        el("div", { class: "row" },
          field("lib-search-name", "Name contains", el("input", {})),
          field("lib-search-tag", "Tag", el("input", {})),
          el("button", { type: "button", id: "lib-search", text: "Search the library" })),
        el("ul", { id: "lib-results", class: "lib-results" }),
        el("button", { type: "button", id: "lib-more", text: "More", hidden: true })),
    );
  }

  const $ = (id) => document.getElementById(id);
  const say = (text) => { $("lib-status").textContent = text; };

  function headers(extra = {}) {
    const key = $("lib-key").value.trim();
    return key ? { ...extra, Authorization: `Bearer ${key}` } : extra;
  }

  async function call(method, path, body, extra = {}) {
    const init = { method, headers: headers(body ? { "Content-Type": "application/json", ...extra } : extra) };
    if (body) init.body = JSON.stringify(body);
    const response = await fetch(path, init);
    const text = await response.text();
    return { response, body: text ? JSON.parse(text) : null };
  }

  function explain(response, body) {
    if (response.status === 401) return "This service needs an API key: enter yours above.";
    if (response.status === 404) return "No such scenario, or not one your key may see.";
    if (response.status === 503) return "The library cannot be reached just now; running scenarios still works. Try again shortly.";
    if (body && body.errors) return `Not saved: ${body.errors.map((e) => `${e.pointer || "/"}: ${e.message}`).join("; ")}`;
    return (body && body.detail) || `The service answered ${response.status}.`;
  }

  function currentRequest() {
    return JSON.parse($("request-json").value);
  }

  function setRequest(request) {
    const area = $("request-json");
    area.value = JSON.stringify(request, null, 2);
    area.dispatchEvent(new Event("change"));
  }

  // The units travel with a record: app.js's typedUnits() and setUnits() read and set the
  // page's unit fields (this script runs after it).

  function writeBody() {
    return {
      name: $("lib-name").value,
      notes: $("lib-notes").value,
      tags: $("lib-tags").value.split(",").map((t) => t.trim()).filter(Boolean),
      shared: $("lib-shared").checked,
      units: typedUnits(),
      request: currentRequest(),
    };
  }

  function show(record) {
    lib.current = record;
    $("lib-name").value = record.name;
    $("lib-notes").value = record.notes;
    $("lib-tags").value = record.tags.join(", ");
    // "Shared" is what saving from here will do: a colleague's record is theirs to share, and
    // a copy saved from it starts private.
    $("lib-shared").checked = record.mine && record.shared;
    setUnits(record.units || {});
    $("lib-revise").hidden = !record.mine;
    // An earlier revision's link opens that revision, as the one on the screen; the latest's
    // opens whatever is latest when it is followed.
    const link = new URL(record.links.page, window.location.href);
    if (record.revision !== record.latest_revision) link.searchParams.set("revision", String(record.revision));
    $("lib-link").value = link.href;
    $("lib-share").hidden = false;
    const revisions = $("lib-revision");
    revisions.replaceChildren(...Array.from({ length: record.latest_revision }, (_, i) => record.latest_revision - i).map((n) =>
      el("option", { value: String(n), text: n === record.latest_revision ? `${n} (latest)` : String(n) })));
    revisions.value = String(record.revision);
    $("lib-delete").hidden = !record.mine;
    $("lib-record").hidden = false;
    $("library").dataset.scenario = record.id;
    $("library").dataset.revision = String(record.revision);
  }

  async function save(revise) {
    let body;
    try {
      body = writeBody();
    } catch (e) {
      say(`Not saved: the whole request is not valid JSON (${e.message}).`);
      return;
    }
    // A copy of a colleague's record under its own name would stand beside it in every search
    // with nothing to tell them apart: unless renamed, it is called a copy.
    if (!revise && lib.current && !lib.current.mine && body.name === lib.current.name) {
      body.name = `${body.name.slice(0, NAME_LIMIT - COPY.length)}${COPY}`;
    }
    const target = revise && lib.current ? `/v1/scenarios/${encodeURIComponent(lib.current.id)}` : "/v1/scenarios";
    // The ETag of the latest revision when the record was opened: changes made from an earlier
    // revision are saved after it, and a revision someone saved since is still caught (412).
    const latest = lib.current && (lib.current.latest_revision || lib.current.revision);
    const extra = revise && lib.current ? { "If-Match": `"${lib.current.id}.${latest}"` } : {};
    say("Saving...");
    const { response, body: answer } = await call(revise ? "PUT" : "POST", target, body, extra);
    if (response.status === 412) {
      say("Not saved: someone changed this scenario since you opened it. Open it again to see their revision.");
      return;
    }
    if (!response.ok) { say(explain(response, answer)); return; }
    show(answer);
    // The scenario on the page is now this record: its name titles the charts, as on opening.
    // The charts on the page are retitled only if they are this request's (inputs changed since
    // the last run leave them another scenario's).
    const name = $("scenario-name");
    if (name.value !== answer.name) {
      name.value = answer.name;
      const drawnFor = state.answer && JSON.stringify(state.answer.request);
      if (drawnFor === JSON.stringify(body.request)) name.dispatchEvent(new Event("change"));
    }
    say(`Saved "${answer.name}" as revision ${answer.revision}.`);
  }

  async function open(id, revision) {
    const query = revision ? `?revision=${encodeURIComponent(revision)}` : "";
    const { response, body } = await call("GET", `/v1/scenarios/${encodeURIComponent(id)}${query}`);
    lib.pending = response.status === 401 ? { id, revision } : null;
    if (!response.ok) { say(explain(response, body)); return; }
    setRequest(body.request);
    show(body);
    // The record's name titles its charts and briefing, and the page says what it now holds.
    $("scenario-name").value = body.name;
    $("status").textContent = `Opened "${body.name}" from the scenario library. Change inputs, then run it.`;
    const version = body.model_version;
    say(`Opened "${body.name}" (revision ${body.revision} of ${body.latest_revision}, saved under model ${version}). `
      + "Run it to see its paths.");
  }

  async function remove() {
    const record = lib.current;
    if (!record || !window.confirm(`Delete "${record.name}" and all its ${record.latest_revision} revision(s)? `
      + "Its link will no longer open it.")) return;
    const { response, body } = await call("DELETE", `/v1/scenarios/${encodeURIComponent(record.id)}`);
    if (!response.ok) { say(explain(response, body)); return; }
    lib.current = null;
    for (const id of ["lib-share", "lib-record", "lib-revise"]) $(id).hidden = true;
    delete $("library").dataset.scenario;
    delete $("library").dataset.revision;
    const item = $("lib-results").querySelector(`li[data-id="${CSS.escape(record.id)}"]`);
    if (item) item.remove();
    // The request stays in the form: it can be saved again as a new scenario.
    say(`Deleted "${record.name}". The request is still in the form above.`);
    $("lib-save").focus();
  }

  function listItem(record) {
    const when = new Date(record.revised_at).toLocaleString();
    const who = record.mine ? (record.shared ? "yours, shared" : "yours") : "shared with you";
    const button = el("button", { type: "button", text: "Open" });
    button.addEventListener("click", () => open(record.id));
    const tags = record.tags.length ? ` [${record.tags.join(", ")}]` : "";
    return el("li", { "data-id": record.id }, button, " ",
      el("strong", { text: record.name }), `${tags}: ${record.kind}, revision ${record.revision}, ${who}, ${when}`);
  }

  async function search(more) {
    if (!more) {
      const params = new URLSearchParams();
      if ($("lib-search-name").value.trim()) params.set("name", $("lib-search-name").value.trim());
      if ($("lib-search-tag").value.trim()) params.set("tag", $("lib-search-tag").value.trim());
      lib.query = params.toString();
      lib.cursor = null;
      $("lib-results").replaceChildren();
    }
    const params = new URLSearchParams(lib.query);
    if (lib.cursor) params.set("cursor", lib.cursor);
    const { response, body } = await call("GET", `/v1/scenarios?${params}`);
    if (!response.ok) { say(explain(response, body)); return; }
    $("lib-results").append(...body.scenarios.map(listItem));
    lib.cursor = body.next_cursor;
    $("lib-more").hidden = !lib.cursor;
    const count = $("lib-results").children.length;
    say(count ? `${count} scenario${count === 1 ? "" : "s"} found${lib.cursor ? " (more below)" : ""}.` : "No scenario found.");
  }

  // The page loads a demo when it starts; a link's scenario opens after that (app.js says
  // when it has started, with or without a demo), so that the demo does not replace it.
  function afterPageStart(then) {
    if (window.shockpathStarted) then();
    else document.addEventListener("shockpath:started", () => then(), { once: true });
  }

  function start() {
    const root = $("library");
    if (!root) return;
    build(root);
    $("lib-key").value = sessionStorage.getItem(KEY_STORE) || "";
    $("lib-key").addEventListener("change", () => {
      sessionStorage.setItem(KEY_STORE, $("lib-key").value.trim());
      if (lib.pending) open(lib.pending.id, lib.pending.revision);
    });
    $("lib-save").addEventListener("click", () => save(false));
    $("lib-revise").addEventListener("click", () => save(true));
    $("lib-search").addEventListener("click", () => search(false));
    $("lib-more").addEventListener("click", () => search(true));
    $("lib-open-revision").addEventListener("click", () => lib.current && open(lib.current.id, $("lib-revision").value));
    $("lib-delete").addEventListener("click", remove);
    $("lib-copy").addEventListener("click", async () => {
      try { await navigator.clipboard.writeText($("lib-link").value); say("Link copied."); }
      catch (e) { $("lib-link").select(); say("Select the link and copy it."); }
    });
    const params = new URLSearchParams(window.location.search);
    const id = params.get("scenario");
    if (id) afterPageStart(() => open(id, params.get("revision")));
  }

  if (document.readyState === "loading") document.addEventListener("DOMContentLoaded", start);
  else start();
})();
