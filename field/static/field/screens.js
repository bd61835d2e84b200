/* Signing in, the day's visits, the outbox and the technician's settings. */
import { ApiError, NoSignal, signIn, signOut } from "./api.js";
import { week } from "./data.js";
import { badge, field, h, screen } from "./dom.js";
import { discard, flush, pending } from "./outbox.js";
import { SYSTEMS, setSystem, system } from "./units.js";

export function signInScreen(done) {
  const show = screen();
  const username = h("input", { name: "username", autocomplete: "username", required: true, autocapitalize: "none", spellcheck: "false" });
  const password = h("input", { name: "password", type: "password", autocomplete: "current-password", required: true });
  const message = h("p", { class: "problem", role: "alert" });
  const form = h(
    "form",
    { class: "card", onsubmit: submit },
    h("h1", {}, "Sign in"),
    h("p", {}, "Sign in once; the phone keeps you signed in until you sign out."),
    field("Username", username),
    field("Password", password),
    message,
    h("button", { type: "submit", class: "button button--primary" }, "Sign in"),
  );
  async function submit(event) {
    event.preventDefault();
    message.textContent = "";
    try {
      done(await signIn(username.value.trim(), password.value));
    } catch (error) {
      if (error instanceof NoSignal) message.textContent = "No signal. Signing in needs the network once.";
      else if (error instanceof ApiError && error.status === 429) message.textContent = "Too many attempts; wait and try again.";
      else message.textContent = "That username and password were not accepted.";
    }
  }
  show(form);
  username.focus();
}

/* A visit's window in its site's time zone (where the technician will be), named. */
export function when(visit, timeZone) {
  const zone = timeZone ? { timeZone } : {};
  const start = new Date(visit.window_start);
  const end = new Date(visit.window_end);
  const day = start.toLocaleDateString(undefined, { weekday: "short", day: "numeric", month: "short", ...zone });
  const time = (d, named) => d.toLocaleTimeString(undefined, { hour: "2-digit", minute: "2-digit", ...(named ? { timeZoneName: "short" } : {}), ...zone });
  return `${day}, ${time(start, false)}–${time(end, true)}`;
}

export const VISIT_STATUS = {
  scheduled: "Not started",
  in_progress: "In progress",
  start_waiting: "In progress (the start waits for signal)",
  submit_waiting: "Submitted on the phone (waits for signal)",
  submitted: "Submitted",
  reviewed: "Reviewed",
  cancelled: "Cancelled",
};

function visitCard(visit) {
  const site = visit.siteRecord;
  return h(
    "li",
    {},
    h(
      "a",
      { class: "visit-card", href: `#/visit/${visit.id}` },
      h("span", { class: "visit-card__when" }, when(visit, site && site.time_zone)),
      h("span", { class: "visit-card__site" }, site ? site.name : `Site ${visit.site}`),
      site && site.address ? h("span", { class: "visit-card__address" }, site.address) : null,
      h(
        "span",
        { class: "visit-card__meta" },
        `${visit.reference} · ${visit.units.length} unit${visit.units.length === 1 ? "" : "s"} · `,
        h("strong", {}, VISIT_STATUS[visit.status] || visit.status),
      ),
    ),
  );
}

export async function dayScreen(user) {
  const show = screen();
  show(h("h1", {}, "Your visits"), h("p", { class: "loading" }, "Loading the week…"));
  let visits;
  try {
    visits = await week();
  } catch (error) {
    if (error instanceof ApiError && error.status === 401) return undefined;
    return show(h("h1", {}, "Your visits"), h("p", { class: "problem" }, "The visits could not be loaded. With no signal, open the app once online first."));
  }
  const today = visits.filter((v) => v.day === 0);
  const later = visits.filter((v) => v.day > 0);
  return show(
    h("h1", {}, "Your visits"),
    h("p", { class: "muted" }, `Signed in as ${user.username}`),
    h("h2", {}, "Today"),
    today.length ? h("ul", { class: "cards" }, today.map(visitCard)) : h("p", {}, "No visits today."),
    h("h2", {}, "This week"),
    later.length ? h("ul", { class: "cards" }, later.map(visitCard)) : h("p", {}, "Nothing else booked this week."),
    h("nav", { class: "actions" }, h("a", { class: "button", href: "#/settings" }, "Units and sign out")),
  );
}

function problemText(problem) {
  if (!problem) return "";
  const body = problem.body || {};
  const lines = Object.entries(body).map(([name, reasons]) => `${name.replaceAll("_", " ")}: ${[].concat(reasons).map((r) => (typeof r === "object" ? JSON.stringify(r) : r)).join("; ")}`);
  return lines.length ? lines : [`the server answered ${problem.status}`];
}

export async function outboxScreen() {
  const show = screen();
  const entries = await pending();
  const rows = entries.map((entry) =>
    h(
      "li",
      { class: "card" },
      h("p", {}, badge(entry.state), " ", h("strong", {}, entry.label)),
      entry.state === "rejected" ? h("ul", { class: "problem" }, [].concat(problemText(entry.problem)).map((line) => h("li", {}, line))) : null,
      entry.state === "rejected"
        ? h(
            "div",
            { class: "actions" },
            entry.kind === "reading_set" || entry.kind === "refrigerant_event"
              ? h("a", { class: "button", href: `#/visit/${entry.visit}/unit/${entry.unit}?correct=${entry.client_id}` }, "Correct it")
              : entry.kind === "submit"
                ? h("a", { class: "button", href: `#/visit/${entry.visit}/submit` }, "Correct it")
                : null,
            h("button", { class: "button button--danger", type: "button", onclick: async () => { await discard(entry.client_id); outboxScreen(); } }, "Discard it"),
          )
        : null,
    ),
  );
  show(
    h("h1", {}, "Waiting to send"),
    rows.length ? h("ul", { class: "cards" }, rows) : h("p", {}, "Everything made on this phone has reached the office."),
    h("div", { class: "actions" }, h("button", { class: "button", type: "button", onclick: () => flush() }, "Send now"), h("a", { class: "button", href: "#/" }, "Back to the day")),
  );
}

export async function settingsScreen(user) {
  const show = screen();
  const kept = h("p", { class: "saved", role: "status", "aria-live": "polite" });
  const choices = Object.entries(SYSTEMS).map(([name, text]) =>
    h(
      "label",
      { class: "choice" },
      h("input", {
        type: "radio",
        name: "units",
        value: name,
        checked: system() === name,
        onchange: async () => {
          await setSystem(name);
          kept.textContent = `✓ Kept on this phone: ${text}.`;
        },
      }),
      ` ${text}`,
    ),
  );
  const unsent = (await pending()).length;
  show(
    h("h1", {}, "Settings"),
    h("fieldset", { class: "card" }, h("legend", {}, "Units for readings"), choices, kept),
    h(
      "section",
      { class: "card" },
      h("h2", {}, "Sign out"),
      h("p", {}, `Signed in as ${user.username}. Signing out clears everything this phone holds for Rimewatch.`),
      unsent ? h("p", { class: "problem" }, `⚠ ${unsent} record${unsent === 1 ? " has" : "s have"} not reached the office yet and would be lost.`) : null,
      h("button", { class: "button button--danger", type: "button", onclick: () => signOut() }, "Sign out"),
    ),
    h("a", { class: "button", href: "#/" }, "Back to the day"),
  );
}
