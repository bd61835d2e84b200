/* What the screens read: the API's answers (kept by the service worker for use offline)
   merged with what the phone has made and not yet sent. */
import { get, getAll } from "./api.js";
import { kvGet, kvSet } from "./store.js";
import { pending, sentFor } from "./outbox.js";
import { query } from "./units.js";

/* YYYY-MM-DD of a day from today, on the phone's clock. */
export function dayKey(offset = 0) {
  const d = new Date();
  d.setDate(d.getDate() + offset);
  return `${d.getFullYear()}-${String(d.getMonth() + 1).padStart(2, "0")}-${String(d.getDate()).padStart(2, "0")}`;
}

const OPEN = new Set(["scheduled", "in_progress"]);

/* Today's and the next six days' visits of the signed-in technician, nearest first (a
   visit in progress before all). */
export async function week() {
  const days = await Promise.all(
    Array.from({ length: 7 }, (_, i) => getAll(`visits/?mine=true&date=${dayKey(i)}`).catch(() => [])),
  );
  const seen = new Map();
  days.forEach((visits, i) => {
    for (const visit of visits) if (!seen.has(visit.id)) seen.set(visit.id, { ...visit, day: i });
  });
  const visits = [...seen.values()].filter((v) => v.day === 0 || OPEN.has(v.status));
  const now = Date.now();
  const distance = (v) => (v.status === "in_progress" ? -1 : Math.abs(Date.parse(v.window_start) - now));
  visits.sort((a, b) => a.day - b.day || distance(a) - distance(b));
  const sites = await sitesOf(visits);
  return visits.map((v) => ({ ...v, siteRecord: sites.get(v.site) }));
}

async function sitesOf(visits) {
  const ids = [...new Set(visits.map((v) => v.site))];
  const found = await Promise.all(ids.map((id) => get(`sites/${id}/`).catch(() => null)));
  return new Map(ids.map((id, i) => [id, found[i]]));
}

/* A visit with its site, its units and the refrigerants' safety classes. */
export async function visit(id) {
  const record = await get(`visits/${id}/`);
  const [site, units] = await Promise.all([
    get(`sites/${record.site}/`).catch(() => null),
    Promise.all(record.units.map((u) => get(`units/${u}/?${query()}`).catch(() => ({ id: u, tag: `unit ${u}` })))),
  ]);
  const refrigerants = await refrigerantsOf(units);
  keepForLater(units);
  return { record, site, units, refrigerants };
}

/* Ask once, with signal, for everything the unit screens read, so the service worker
   holds it for a roof with none. */
function keepForLater(units) {
  if (!navigator.onLine) return;
  for (const unit of units) {
    unitDetails(unit.id);
    liveInputs(unit).catch(() => null);
  }
}

/* What live.js needs for a unit: its resolved targets and its refrigerant's table. */
export async function liveInputs(unit) {
  const targets = await get(`units/${unit.id}/targets/`);
  const designation = targets.refrigerant.designation;
  const table = await get(`refrigerants/${encodeURIComponent(designation)}/saturation-table/`);
  return { targets, tables: { [designation]: table } };
}

async function refrigerantsOf(units) {
  const names = [...new Set(units.map((u) => u.refrigerant).filter(Boolean))];
  const found = await Promise.all(names.map((n) => get(`refrigerants/${encodeURIComponent(n)}/`).catch(() => null)));
  return new Map(names.map((n, i) => [n, found[i]]));
}

/* What the phone holds about one unit: its last diagnosis, open flags, capacitors. */
export async function unitDetails(unitId) {
  const [diagnosis, flags, components] = await Promise.all([
    get(`units/${unitId}/diagnosis/?${query()}`).catch(() => null),
    get(`units/${unitId}/flags/?${query()}`).catch(() => []),
    getAll(`components/?unit=${unitId}`).catch(() => []),
  ]);
  return { diagnosis, flags: Array.isArray(flags) ? flags : flags.results || [], components };
}

/* The visit's reading sets, as the server has them, plus those sent from here since and
   those still waiting: each {client_id, unit, stage, taken_at, notes, diagnosis, state}. */
export async function readingSets(visitId) {
  const server = await getAll(`visits/${visitId}/reading-sets/?${query()}`).catch(() => []);
  const rows = new Map(server.map((r) => [r.client_id, { ...r, state: "sent" }]));
  for (const sent of await sentFor(visitId)) {
    if (sent.kind === "reading_set" && !rows.has(sent.client_id)) rows.set(sent.client_id, { ...sent.answer, state: "sent" });
    if (sent.kind === "withdraw") rows.delete(sent.withdrawn);
  }
  for (const entry of await pending()) {
    if (entry.visit !== visitId) continue;
    if (entry.kind === "reading_set") rows.set(entry.client_id, { ...entry.body, state: entry.state, entry });
    if (entry.kind === "withdraw") rows.delete(entry.withdrawn);
  }
  return [...rows.values()].sort((a, b) => Date.parse(a.taken_at) - Date.parse(b.taken_at));
}

/* The technician's answers before climbing, per visit and unit, copied into each set. */
export const checklist = async (visitId, unitId) => (await kvGet(`check:${visitId}:${unitId}`)) || {};
export const keepChecklist = (visitId, unitId, answers) => kvSet(`check:${visitId}:${unitId}`, answers);
