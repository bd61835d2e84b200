/* The public API, as a native app would use it: a token from auth/token/, sent on every
   request. A 401 means the token was revoked (or the account disabled): the phone forgets
   everything it holds and asks for a sign-in again. */
import { forgetAll, kvGet, kvSet } from "./store.js";

const BASE = document.body.dataset.api;
let token = null;

export class ApiError extends Error {
  constructor(status, body) {
    super(`the server answered ${status}`);
    this.status = status;
    this.body = body;
  }
}

/* No answer at all: no signal, or nothing kept for this address. */
export class NoSignal extends Error {}

export async function signedInUser() {
  token = (await kvGet("token")) || null;
  return token ? kvGet("user") : null;
}

async function forget() {
  token = null;
  await forgetAll();
  window.dispatchEvent(new CustomEvent("rimewatch:signed-out"));
}

export async function signIn(username, password) {
  let response;
  try {
    response = await fetch(`${BASE}auth/token/`, {
      method: "POST",
      headers: { "Content-Type": "application/json", Accept: "application/json" },
      body: JSON.stringify({ username, password }),
    });
  } catch {
    throw new NoSignal("no signal: signing in needs the network once");
  }
  const body = await response.json().catch(() => ({}));
  if (!response.ok) throw new ApiError(response.status, body);
  token = body.token;
  await kvSet("token", body.token);
  const user = { username: body.username, role: body.role };
  await kvSet("user", user);
  return user;
}

export async function signOut() {
  try {
    await fetch(`${BASE}auth/token/`, { method: "DELETE", headers: headers() });
  } catch {
    /* No signal: the token stays valid on the server until the office revokes it. */
  }
  await forget();
}

function headers(withBody = false) {
  const h = { Accept: "application/json" };
  if (token) h.Authorization = `Token ${token}`;
  if (withBody) h["Content-Type"] = "application/json";
  return h;
}

/* One request. Answers {status, body}; a 401 signs the phone out; no answer is NoSignal. */
export async function send(method, path, body) {
  let response;
  try {
    response = await fetch(`${BASE}${path}`, {
      method,
      headers: headers(body !== undefined),
      body: body === undefined ? undefined : JSON.stringify(body),
    });
  } catch {
    throw new NoSignal(`no signal for ${path}`);
  }
  const answer = response.status === 204 ? null : await response.json().catch(() => null);
  if (response.status === 401) {
    await forget();
    throw new ApiError(401, answer);
  }
  return { status: response.status, body: answer };
}

export async function get(path) {
  const { status, body } = await send("GET", path);
  if (status !== 200) throw new ApiError(status, body);
  return body;
}

/* Every page of a list. */
export async function getAll(path) {
  const joiner = path.includes("?") ? "&" : "?";
  let page = 1;
  const rows = [];
  for (;;) {
    const body = await get(`${path}${joiner}page_size=200&page=${page}`);
    rows.push(...body.results);
    if (!body.next) return rows;
    page += 1;
  }
}
