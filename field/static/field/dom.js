/* Building the screens without inline script or style (the Content-Security-Policy forbids
   both): elements are made here, text is always set as text. */

export function h(tag, attrs = {}, ...children) {
  const el = document.createElement(tag);
  for (const [name, value] of Object.entries(attrs || {})) {
    if (value === null || value === undefined || value === false) continue;
    if (name.startsWith("on")) el.addEventListener(name.slice(2), value);
    else if (name === "class") el.className = value;
    else if (value === true) el.setAttribute(name, "");
    else el.setAttribute(name, String(value));
  }
  for (const child of children.flat(Infinity)) {
    if (child === null || child === undefined || child === false) continue;
    el.append(child instanceof Node ? child : document.createTextNode(String(child)));
  }
  return el;
}

let refresher = null;

/* Redraw what changed on the current screen when the outbox sends something. */
export const refresh = () => (refresher ? refresher() : undefined);

let drawn = 0;

/* A screen's way to draw itself: only the screen asked for last may draw, so one that was
   still loading when the technician moved on cannot cover the screen they moved to. */
export function screen() {
  drawn += 1;
  const mine = drawn;
  const draw = (...children) => (mine === drawn ? show(...children) : undefined);
  /* Redraw on the outbox's news only while this screen is the one shown. */
  draw.whenSent = (redraw) => {
    if (mine === drawn) refresher = redraw;
  };
  return draw;
}

/* Replace the main area's content and move focus there (a screen change is announced). */
function show(...children) {
  refresher = null;
  const main = document.getElementById("main");
  main.replaceChildren(...children.flat(Infinity).filter(Boolean));
  main.focus({ preventScroll: true });
  window.scrollTo(0, 0);
}

/* A status is never colour alone: a symbol and a word go with it. */
const STATUS = {
  ok: ["✓", "OK"],
  watch: ["!", "Watch"],
  fault: ["✕", "Fault"],
  not_scored: ["–", "Not judged"],
  queued: ["↑", "Waiting for signal"],
  sent: ["✓", "Sent"],
  rejected: ["✕", "Needs correcting"],
};

export function badge(status) {
  const [symbol, word] = STATUS[status] || ["?", status];
  return h("span", { class: `badge badge--${status}` }, h("span", { "aria-hidden": "true" }, symbol), " ", word);
}

export function caution(title, ...lines) {
  return h(
    "aside",
    { class: "caution", role: "note" },
    h("p", { class: "caution__title" }, h("span", { "aria-hidden": "true" }, "⚠ "), title),
    lines.map((line) => h("p", {}, line)),
  );
}

export function field(label, input, hint) {
  const id = input.id || `f-${Math.random().toString(36).slice(2, 9)}`;
  input.id = id;
  return h("div", { class: "field" }, h("label", { for: id }, label), input, hint ? h("p", { class: "hint" }, hint) : null);
}

export function fmt(value, digits = 1) {
  return value === null || value === undefined || Number.isNaN(value) ? "—" : Number(value).toFixed(digits);
}

/* A number field that brings up the phone's number pad (decimals and signs allowed). */
export function numberInput(name, value) {
  return h("input", { name, type: "number", inputmode: "decimal", step: "any", value: value ?? "" });
}

/* The number typed in ``input``; null when it is empty. */
export function num(input) {
  const text = input.value.trim();
  return text === "" ? null : Number(text);
}
