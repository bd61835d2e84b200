/* Records made on the phone wait here until they reach the server, exactly once.

   Each record gets its client_id when it is made and keeps it for every attempt, so the
   server stores it once however often it is sent. The outbox is sent in the order the
   records were made: on `online`, when the app starts, after each save, and again a little
   later after an answer that says "try later". What the server answers decides:
   - 200 or 201: stored (201) or already stored (200), the record leaves the outbox;
   - 409 naming the record stored under this client_id: it is already there, done too;
     for a submit, a 409 on a visit that is already submitted means the same;
   - another 4xx: the technician must correct or discard it; the visit's later records wait;
   - no answer, 429 or 5xx (503 while the database fails over): kept, sent again later.
*/
import { ApiError, NoSignal, get, send } from "./api.js";
import { kvGet, kvSet, outboxAll, outboxDelete, outboxPut } from "./store.js";

const RETRY_MS = 30000;
/* The states a visit is in once a start or a submit has reached the server. */
const MOVED = { start: ["in_progress", "submitted", "reviewed"], submit: ["submitted", "reviewed"] };
let running = null;
let again = false;
let retryTimer = null;
const listeners = new Set();

export const onChange = (listener) => listeners.add(listener);

async function notify() {
  const entries = await outboxAll();
  for (const listener of listeners) listener(entries);
}

export function newClientId() {
  return crypto.randomUUID();
}

/* Keep a record to send: {client_id, kind, visit, unit, path, body, label[, method]}.
   A correction of a refused record takes its place (`replaces`): the same turn in the
   order, so it still goes before the visit's submit. */
export async function enqueue({ replaces, ...entry }) {
  let made = Date.now();
  if (replaces) {
    const old = (await outboxAll()).find((e) => e.client_id === replaces);
    if (old) made = old.made;
    await outboxDelete(replaces);
  }
  await outboxPut({ ...entry, made, state: "queued", problem: null });
  await notify();
  flush();
}

export async function discard(clientId) {
  await outboxDelete(clientId);
  await notify();
}

export const pending = () => outboxAll();

/* What the server answered for records sent from this phone, by visit (for the screens). */
export async function sentFor(visitId) {
  return (await kvGet(`sent:${visitId}`)) || [];
}

async function remember(entry, answer) {
  const key = `sent:${entry.visit}`;
  const kept = (await kvGet(key)) || [];
  kept.push({ client_id: entry.client_id, kind: entry.kind, unit: entry.unit, withdrawn: entry.withdrawn, answer });
  await kvSet(key, kept);
}

export function flush() {
  if (running) {
    again = true;
    return running;
  }
  running = (async () => {
    do {
      again = false;
      await drain();
    } while (again);
  })().finally(() => {
    running = null;
  });
  return running;
}

function later() {
  clearTimeout(retryTimer);
  retryTimer = setTimeout(flush, RETRY_MS);
}

async function drain() {
  if (!navigator.onLine) return notify();
  const waiting = new Set();
  for (const entry of await outboxAll()) {
    if (entry.state === "rejected" || waiting.has(entry.visit)) {
      waiting.add(entry.visit);
      continue;
    }
    let outcome;
    try {
      outcome = await post(entry);
    } catch (error) {
      if (error instanceof NoSignal) outcome = "later";
      else if (error instanceof ApiError && error.status === 401) return undefined;
      else throw error;
    }
    if (outcome === "later") {
      later();
      break;
    }
    if (outcome === "rejected") waiting.add(entry.visit);
    await notify();
  }
  return notify();
}

async function post(entry) {
  const { status, body } = await send(entry.method || "POST", entry.path, entry.body);
  if (status === 200 || status === 201 || status === 204 || (status === 404 && entry.method === "DELETE")) {
    await remember(entry, body);
    await outboxDelete(entry.client_id);
    return "done";
  }
  if (status === 409 && (await alreadyThere(entry, body))) {
    await remember(entry, body);
    await outboxDelete(entry.client_id);
    return "done";
  }
  if (status === 429 || status >= 500) return "later";
  await outboxPut({ ...entry, state: "rejected", problem: { status, body } });
  return "rejected";
}

async function alreadyThere(entry, body) {
  if (entry.kind === "submit" || entry.kind === "start") {
    const visit = await get(`visits/${entry.visit}/`);
    return MOVED[entry.kind].includes(visit.status);
  }
  return Boolean(body && body.stored && body.client_id);
}

/* Send when the signal comes back, and now. */
export function start() {
  window.addEventListener("online", () => flush());
  return flush();
}
