/* The technician's units (°F with psig, °C with kPa or °C with bar), remembered on the
   phone. Measurements are sent as typed, with the API's `units` object saying which; the
   server converts. Answers are asked for in US or SI units; bar is kPa divided by 100. */
import { kvGet, kvSet } from "./store.js";

export const SYSTEMS = {
  us: { label: "°F and psig", temperature: "F", pressure: "psig", mass: "lb", query: "us" },
  si: { label: "°C and kPa", temperature: "C", pressure: "kPa", mass: "kg", query: "si" },
  bar: { label: "°C and bar", temperature: "C", pressure: "bar", mass: "kg", query: "si" },
};

let current = "us";

export async function loadSystem() {
  const kept = await kvGet("units");
  current = SYSTEMS[kept] ? kept : "us";
  return current;
}

export async function setSystem(name) {
  current = SYSTEMS[name] ? name : "us";
  await kvSet("units", current);
}

export const system = () => current;
export const spec = () => SYSTEMS[current];

/* The `units` object of a request carrying measurements typed in the chosen units. */
export function wireUnits() {
  const s = spec();
  return { temperature: s.temperature, temperature_difference: s.temperature, pressure: s.pressure, mass: s.mass };
}

/* `?units=` for answers to show in the chosen units. */
export const query = () => `units=${spec().query}`;

/* The unit labels the forms show. */
export function label(quantity) {
  const s = spec();
  return {
    temperature: `°${s.temperature}`,
    temperature_difference: s.temperature === "F" ? "°F" : "K",
    pressure: s.pressure,
    mass: s.mass,
  }[quantity];
}

/* A value of an answer asked for with query(), with its unit, in the chosen units. */
export function shown(value, unit) {
  if (value === null || value === undefined) return { value: null, unit };
  if (current === "bar" && /^kPa/.test(unit || "")) return { value: value / 100, unit: unit.replace("kPa", "bar") };
  return { value, unit };
}
