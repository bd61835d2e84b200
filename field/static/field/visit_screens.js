/* A visit: its site, its units and what the office asked; starting it; submitting it. */
import { ApiError } from "./api.js";
import { readingSets, visit as loadVisit } from "./data.js";
import { badge, field, h, screen } from "./dom.js";
import { enqueue, newClientId, pending } from "./outbox.js";
import { VISIT_STATUS, when } from "./screens.js";

/* The visit's status as the phone sees it: a start or submit waiting to send counts. */
async function statusOf(record) {
  const waiting = (await pending()).filter((e) => e.visit === record.id);
  if (waiting.some((e) => e.kind === "submit")) return "submit_waiting";
  if (record.status === "scheduled" && waiting.some((e) => e.kind === "start")) return "start_waiting";
  return record.status;
}

function loadFailed(show, error) {
  if (error instanceof ApiError && error.status === 401) return;
  show(h("h1", {}, "Visit"), h("p", { class: "problem" }, "This visit could not be loaded. Open it once with signal so the phone keeps it."), h("a", { class: "button", href: "#/" }, "Back to the day"));
}

export const REASONS = {
  not_accessible: "Not accessible",
  off_by_design: "Off by design (not meant to run now)",
  not_running: "Not running",
  other: "Other reason",
};

export async function visitScreen(id) {
  const show = screen();
  let loaded;
  try {
    loaded = await loadVisit(id);
  } catch (error) {
    return loadFailed(show, error);
  }
  const { record, site, units, refrigerants } = loaded;
  const sets = await readingSets(id);
  const status = await statusOf(record);
  const unitRows = units.map((unit) => {
    const count = sets.filter((s) => s.unit === unit.id).length;
    const refrigerant = refrigerants.get(unit.refrigerant);
    return h(
      "li",
      {},
      h(
        "a",
        { class: "unit-card", href: `#/visit/${id}/unit/${unit.id}` },
        h("span", { class: "unit-card__tag" }, unit.tag),
        h("span", {}, unit.description || ""),
        h("span", { class: "unit-card__meta" }, `${unit.refrigerant || "refrigerant unknown"}${refrigerant ? ` (${refrigerant.safety_class})` : ""} · `, count ? `✓ ${count} reading set${count === 1 ? "" : "s"}` : "no readings yet"),
      ),
    );
  });
  const start = async () => {
    await enqueue({ client_id: newClientId(), kind: "start", visit: id, path: `visits/${id}/start/`, body: undefined, label: `Start of visit ${record.reference}` });
    visitScreen(id);
  };
  show(
    h("p", {}, h("a", { href: "#/" }, "← The day")),
    h("h1", {}, `${site ? site.name : "Visit"}`),
    h("p", { class: "status-line" }, `${record.reference} · `, h("strong", {}, VISIT_STATUS[status] || status)),
    h("p", {}, when(record, site && site.time_zone)),
    h(
      "section",
      { class: "card" },
      h("h2", {}, "Site"),
      site ? h("p", { class: "address" }, site.address || "No address on record") : null,
      site && site.access_notes ? h("p", { class: "access" }, h("strong", {}, "Access: "), site.access_notes) : null,
      site ? h("p", {}, `Time zone: ${site.time_zone} · Elevation: ${Math.round(site.elevation_m)} m`) : null,
    ),
    h("section", { class: "card" }, h("h2", {}, "What the office asked"), h("p", { class: "asked" }, record.reported_problem || "Nothing noted: routine visit.")),
    status === "scheduled" ? h("button", { class: "button button--primary", type: "button", onclick: start }, "Start the visit") : null,
    h("h2", {}, "Units"),
    h("ul", { class: "cards" }, unitRows),
    status === "in_progress" || status === "start_waiting" ? h("a", { class: "button button--primary", href: `#/visit/${id}/submit` }, "Finish and submit") : null,
  );
  show.whenSent(() => {
    if (location.hash === `#/visit/${id}`) visitScreen(id);
  });
  return undefined;
}

export async function submitScreen(id) {
  const show = screen();
  let loaded;
  try {
    loaded = await loadVisit(id);
  } catch (error) {
    return loadFailed(show, error);
  }
  const { record, units } = loaded;
  const sets = await readingSets(id);
  const summary = h("textarea", { name: "work_summary", rows: 5, "aria-required": "true", maxlength: 2000 }, record.work_summary || "");
  const message = h("div", { class: "problem", role: "alert" });
  const missing = units.filter((u) => !sets.some((s) => s.unit === u.id));
  const reasons = missing.map((unit) => {
    const select = h("select", { name: `reason-${unit.id}` }, h("option", { value: "" }, "Choose why…"), Object.entries(REASONS).map(([value, text]) => h("option", { value }, text)));
    const note = h("input", { name: `note-${unit.id}`, maxlength: 2000 });
    return { unit, select, note };
  });
  const done = units.filter((u) => !missing.includes(u));
  async function submit(event) {
    event.preventDefault();
    const problems = [];
    if (!summary.value.trim()) problems.push("Write a summary of the work.");
    for (const { unit, select } of reasons) if (!select.value) problems.push(`Say why ${unit.tag} has no readings.`);
    if (problems.length) {
      message.replaceChildren(...problems.map((p) => h("p", {}, `✕ ${p}`)));
      return;
    }
    const body = { work_summary: summary.value.trim() };
    if (reasons.length) body.units_not_read = reasons.map(({ unit, select, note }) => ({ unit: unit.id, reason: select.value, note: note.value.trim() }));
    const waiting = (await pending()).filter((e) => e.visit === id && e.kind === "submit");
    await enqueue({ client_id: waiting.length ? waiting[0].client_id : newClientId(), kind: "submit", visit: id, path: `visits/${id}/submit/`, body, label: `Submit of visit ${record.reference}` });
    location.hash = `#/visit/${id}`;
  }
  show(
    h("p", {}, h("a", { href: `#/visit/${id}` }, "← The visit")),
    h("h1", {}, `Submit ${record.reference}`),
    h(
      "form",
      { onsubmit: submit },
      field("Work summary (required)", summary, "What was found and done, for the office and the customer."),
      h("h2", {}, "Units"),
      h("ul", { class: "cards" }, done.map((u) => h("li", { class: "card" }, badge("ok"), ` ${u.tag}: readings recorded`))),
      reasons.map(({ unit, select, note }) =>
        h("fieldset", { class: "card" }, h("legend", {}, `${unit.tag}: no readings — why?`), field("Reason", select), field("Note (optional)", note)),
      ),
      message,
      h("button", { class: "button button--primary", type: "submit" }, "Submit the visit"),
      h("p", { class: "hint" }, "With no signal the submit waits on the phone and goes when the signal returns, after the visit's readings."),
    ),
  );
  return undefined;
}
