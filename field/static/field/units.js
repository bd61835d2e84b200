/* The technician's units (°F with psig, °C with kPa or °C with bar), remembered on the
   phone. Measurements are sent as typed, with the API's `units` object saying which; the
   server converts. Answers are asked for in SI and shown through live.js's conversions, so
   the phone has one rule for units. */
import { SYSTEMS as UNIT_SETS, fromDisplay, toDisplay } from "./live.js";
import { kvGet, kvSet } from "./store.js";

export const SYSTEMS = {
  F_psig: "°F and psig",
  C_kPa: "°C and kPa",
  C_bar: "°C and bar",
};

let current = "F_psig";

export async function loadSystem() {
  const kept = await kvGet("units");
  current = SYSTEMS[kept] ? kept : "F_psig";
  return current;
}

export async function setSystem(name) {
  current = SYSTEMS[name] ? name : "F_psig";
  await kvSet("units", current);
}

export const system = () => current;

/* The `units` object of a request carrying measurements typed in the chosen units. */
export const wireUnits = () => ({ ...UNIT_SETS[current] });

/* `?units=` of every request whose answer carries measurements: SI, converted here. */
export const query = () => "units=si";

const DEGREES = { F: "°F", C: "°C" };

/* The unit a form shows for a quantity. */
export function label(quantity) {
  const unit = UNIT_SETS[current][quantity];
  return DEGREES[unit] || unit;
}

/* The quantity an SI unit of an answer measures (others, A, V, µF, %, are shown as sent). */
const QUANTITY_OF = { C: "temperature", K: "temperature_difference", kPa: "pressure", kg: "mass" };

/* A value of an answer in SI, with its unit, in the chosen units: {value, unit}. */
export function shown(value, unit) {
  const quantity = QUANTITY_OF[unit];
  if (!quantity) return { value: value ?? null, unit: unit || "" };
  return { value: toDisplay(value, quantity, current), unit: label(quantity) };
}

/* A number typed in the chosen units, in SI (null when blank). */
export const typedSi = (value, quantity) => fromDisplay(value, quantity, current);
export const siShown = (value, quantity) => toDisplay(value, quantity, current);
