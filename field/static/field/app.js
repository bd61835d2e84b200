/* Rimewatch Field: starts the app, keeps the service worker, draws the screen the address
   names (#/, #/visit/ID, #/visit/ID/unit/ID, #/visit/ID/submit, #/outbox, #/settings). */
import { signedInUser } from "./api.js";
import { h, refresh } from "./dom.js";
import { onChange, start as startOutbox } from "./outbox.js";
import { dayScreen, outboxScreen, settingsScreen, signInScreen } from "./screens.js";
import { loadSystem } from "./units.js";
import { submitScreen, visitScreen } from "./visit_screens.js";
import { unitScreen } from "./unit_screen.js";

let user = null;

const ROUTES = [
  [/^#\/visit\/(\d+)\/unit\/(\d+)(?:\?correct=([\w-]+))?$/, (m) => unitScreen(Number(m[1]), Number(m[2]), m[3])],
  [/^#\/visit\/(\d+)\/submit$/, (m) => submitScreen(Number(m[1]))],
  [/^#\/visit\/(\d+)$/, (m) => visitScreen(Number(m[1]))],
  [/^#\/outbox$/, () => outboxScreen()],
  [/^#\/settings$/, () => settingsScreen(user)],
];

export async function route() {
  if (!user) return signInScreen(signedIn);
  for (const [pattern, draw] of ROUTES) {
    const match = location.hash.match(pattern);
    if (match) return draw(match);
  }
  return dayScreen(user);
}

async function signedIn(who) {
  user = who;
  await startOutbox();
  if (location.hash && location.hash !== "#/") location.hash = "#/";
  else route();
}

function showSignal() {
  const signal = document.getElementById("signal");
  signal.replaceChildren(
    navigator.onLine
      ? h("span", { class: "signal--on" }, h("span", { "aria-hidden": "true" }, "● "), "Online")
      : h("span", { class: "signal--off" }, h("span", { "aria-hidden": "true" }, "○ "), "No signal: saving on the phone"),
  );
}

function showOutbox(entries) {
  const box = document.getElementById("outbox-status");
  const waiting = entries.filter((e) => e.state === "queued").length;
  const rejected = entries.filter((e) => e.state === "rejected").length;
  if (!waiting && !rejected) return box.replaceChildren();
  box.replaceChildren(
    h(
      "a",
      { href: "#/outbox", class: rejected ? "outbox-status__link outbox-status--rejected" : "outbox-status__link" },
      waiting ? `↑ ${waiting} waiting to send` : "",
      waiting && rejected ? " · " : "",
      rejected ? `✕ ${rejected} need correcting` : "",
    ),
  );
}

async function main() {
  if ("serviceWorker" in navigator) {
    navigator.serviceWorker
      .register(document.body.dataset.sw, { scope: document.body.dataset.scope })
      .catch(() => {
        /* Without a worker the app still runs; it only cannot open with no signal. */
      });
  }
  await loadSystem();
  showSignal();
  window.addEventListener("online", showSignal);
  window.addEventListener("offline", showSignal);
  window.addEventListener("hashchange", route);
  window.addEventListener("rimewatch:signed-out", () => {
    user = null;
    document.getElementById("outbox-status").replaceChildren();
    location.hash = "";
    route();
  });
  onChange((entries) => {
    showOutbox(entries);
    refresh();
  });
  user = await signedInUser();
  if (user) startOutbox();
  route();
}

main();
