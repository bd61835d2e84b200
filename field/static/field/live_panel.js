/* The numbers shown while the readings are typed, worked out on the phone by live.js from
   the unit's targets and its refrigerant's saturation table (kept for offline use): the
   saturation temperatures, superheat and subcooling, where the gauges should read, each
   metric's status, which way a TXV wants turning, and the electrical checks. */
import { badge, caution, field, fmt, h } from "./dom.js";
import { ELECTRICAL_CAUTION, ampsAgainstRating, capacitorMicrofarads, liveNumbers, voltageUnbalancePercent } from "./live.js";
import { label, siShown, typedSi } from "./units.js";

const T = "temperature";
const DT = "temperature_difference";
const P = "pressure";

const temp = (c) => `${fmt(siShown(c, T))} ${label(T)}`;
const diff = (k) => `${fmt(siShown(k, DT))} ${label(DT)}`;
const press = (kpa) => `${fmt(siShown(kpa, P), label(P) === "bar" ? 2 : 1)} ${label(P)}`;

const METRIC_WORDS = {
  box_temp: ["Box temperature", T],
  evaporator_td: ["Evaporator TD", DT],
  condenser_split: ["Condenser split", DT],
  superheat: ["Superheat", DT],
  subcooling: ["Subcooling", DT],
  discharge_line_temp: ["Discharge line", T],
  compression_ratio: ["Compression ratio", null],
  head_pressure: ["Head pressure", P],
};

/* Metrics whose target is a ceiling, not an aim. */
const LIMITS = new Set(["discharge_line_temp", "compression_ratio", "head_pressure"]);

function shownMetric(value, quantity) {
  if (value === null) return "—";
  if (quantity === T) return temp(value);
  if (quantity === DT) return diff(value);
  if (quantity === P) return press(value);
  return fmt(value, 2);
}

/* The readings of the form, in SI, as live.js takes them. */
export function readingsSi(values, compressorRunning, inDefrost) {
  return {
    box_temp_c: typedSi(values.box_temp, T),
    entering_air_temp_c: typedSi(values.entering_air_temp, T),
    suction_kpa_gauge: typedSi(values.suction_pressure, P),
    suction_line_temp_c: typedSi(values.suction_line_temp, T),
    head_kpa_gauge: typedSi(values.head_pressure, P),
    liquid_line_temp_c: typedSi(values.liquid_line_temp, T),
    discharge_line_temp_c: typedSi(values.discharge_line_temp, T),
    compressor_running: compressorRunning,
    in_defrost: inDefrost,
  };
}

function saturation(side, name) {
  if (side.dew_c === null) return h("p", {}, `${name}: type the pressure`);
  const glide = side.bubble_c !== null && Math.abs(side.dew_c - side.bubble_c) >= 0.05;
  return h("p", {}, h("strong", {}, `${name}: `), glide ? `dew ${temp(side.dew_c)}, bubble ${temp(side.bubble_c)}` : temp(side.dew_c));
}

function aim(side, name) {
  if (side.target_c === null) return null;
  const range = side.low_kpa_gauge !== null ? ` (${press(side.low_kpa_gauge)} to ${press(side.high_kpa_gauge)})` : "";
  return h("p", {}, h("strong", {}, `${name} target: `), `${temp(side.target_c)}, gauge ${press(side.target_kpa_gauge)}${range}`);
}

/* Which way a TXV wants turning, from the live superheat against its band. */
function txvAdvice(numbers) {
  const sh = numbers.metrics.find((m) => m.name === "superheat");
  if (!sh || sh.measured === null || sh.low === null) return null;
  const band = `${diff(sh.low)} to ${diff(sh.high)}`;
  let advice = "within its band: leave the valve as it is.";
  if (sh.measured > sh.high) advice = "above its band: open the valve a little (opening lowers superheat).";
  if (sh.measured < sh.low) advice = "below its band: close the valve a little (closing raises superheat).";
  return h("p", { class: "txv-advice" }, h("strong", {}, "TXV: "), `superheat ${diff(sh.measured)}, band ${band}, is ${advice}`);
}

export function livePanel(inputs, txv) {
  const body = h("div", {});
  const panel = h(
    "section",
    { class: "live", "aria-live": "polite", "aria-label": "Live numbers" },
    h("h3", {}, "Live numbers"),
    body,
  );
  const update = (readings) => {
    let numbers;
    try {
      numbers = liveNumbers({ ...inputs, elevationM: inputs.targets.site.elevation_m, readings });
    } catch {
      body.replaceChildren(h("p", {}, "These readings cannot be worked out on the phone; the server will judge them."));
      return;
    }
    const metrics = numbers.metrics.filter((m) => m.measured !== null);
    const parts = [
      saturation(numbers.suction, "Suction saturation"),
      saturation(numbers.head, "Head saturation"),
      aim(numbers.evaporating, "Evaporating"),
      aim(numbers.condensing, "Condensing"),
      metrics.length
        ? h(
            "ul",
            { class: "metrics" },
            metrics.map((m) => {
              const [word, quantity] = METRIC_WORDS[m.name] || [m.name, null];
              const aimed = m.target !== null ? ` (${LIMITS.has(m.name) ? "limit" : "aim"} ${shownMetric(m.target, quantity)})` : "";
              return h("li", { "data-metric": m.name }, badge(m.status), ` ${word}: ${shownMetric(m.measured, quantity)}`, aimed);
            }),
          )
        : h("p", { class: "hint" }, "Type the pressures and temperatures to see superheat, subcooling and their status."),
      txv ? txvAdvice(numbers) : null,
    ];
    body.replaceChildren(...parts.filter(Boolean));
  };
  return { panel, update };
}

/* The cautions shown with the electrical fields and helpers (live.js words them once). */
export const electricalCaution = () => caution("Electrical work", ELECTRICAL_CAUTION);

/* Amps against the nameplate and the supply's unbalance, from the form's legs. */
export function electricalLines(targets, amps, volts) {
  const e = (targets && targets.electrical) || {};
  const lines = [];
  const rating = ampsAgainstRating(amps, e.rla_a, e.lra_a);
  if (rating.highest_a !== null && rating.percent_of_rla !== null) {
    const over = rating.percent_of_rla > 100;
    lines.push(h("li", {}, badge(over ? "watch" : "ok"), ` Highest leg ${fmt(rating.highest_a)} A: ${fmt(rating.percent_of_rla, 0)} % of RLA (${e.rla_a} A)${rating.percent_of_lra !== null ? `, ${fmt(rating.percent_of_lra, 0)} % of LRA (${e.lra_a} A)` : ""}`));
  }
  const unbalance = voltageUnbalancePercent(volts);
  if (unbalance !== null) {
    // NEMA MG 1 (14.36): a motor is built for 1 %; above it, derated; above 5 %, not run.
    const level = unbalance > 5 ? "fault" : unbalance > 1 ? "watch" : "ok";
    lines.push(h("li", {}, badge(level), ` Voltage unbalance ${fmt(unbalance)} % (NEMA MG 1: derate the motor above 1 %, do not run it above 5 %)`));
  }
  return lines;
}

/* The capacitor check: µF from the current through the capacitor and the volts across it
   while running, against the band of the fitted part. */
export function capacitorCheck(targets) {
  const e = (targets && targets.electrical) || {};
  const amps = h("input", { name: "cap_amps", type: "number", inputmode: "decimal", step: "any" });
  const volts = h("input", { name: "cap_volts", type: "number", inputmode: "decimal", step: "any" });
  const result = h("p", { role: "status", "aria-live": "polite" });
  const band = e.run_capacitor;
  const work = () => {
    const uf = capacitorMicrofarads(amps.value === "" ? null : amps.value, volts.value === "" ? null : volts.value, e.hertz || 60);
    if (uf === null) return result.replaceChildren();
    if (!band || band.low_uf === null) return result.replaceChildren(`${fmt(uf)} µF (no rating on record to compare)`);
    const inside = uf >= band.low_uf && uf <= band.high_uf;
    return result.replaceChildren(badge(inside ? "ok" : "fault"), ` ${fmt(uf)} µF against the rating ${fmt(band.low_uf)}–${fmt(band.high_uf)} µF`);
  };
  amps.addEventListener("input", work);
  volts.addEventListener("input", work);
  return h(
    "section",
    { class: "card" },
    h("h2", {}, "Capacitor check"),
    electricalCaution(),
    h("p", { class: "hint" }, `µF = ${e.hertz === 50 ? "3183" : "2652"} × amps through the capacitor ÷ volts across it (at ${e.hertz || 60} Hz).`),
    h("div", { class: "grid" }, field("Amps through the capacitor (A)", amps), field("Volts across the capacitor (V)", volts)),
    result,
  );
}
