// Live numbers for the technician's phone: saturation temperatures, superheat, subcooling,
// targets and each metric's status, worked out on the phone while the readings are typed,
// offline, and agreeing with the diagnosis the server stores for the same readings.
//
// Pure functions, no dependencies, SI inside (C, K for differences, kPa gauge). The phone
// feeds it two answers of the API it keeps for the visit:
//   tables:  designation -> GET /api/v1/refrigerants/{designation}/saturation-table/
//   targets: GET /api/v1/units/{id}/targets/
// and reads them exactly as the server does (docs/api.md explains both; the arithmetic
// below follows diagnostics/core: saturation/lookup.py, targets.py, batch.py, grading.py
// and scoring.py, in the same order of operations, so the results agree to rounding).
// tests/browser/test_live_agreement.py runs it in chromium against the server's diagnosis.
//
// Exports: liveNumbers (the numbers above), saturationTempC, saturationPressureKpaAbs,
// basisPressureKpaAbs and atmosphereKpa (the pieces it is made of), SYSTEMS, toDisplay and
// fromDisplay (F/psig, C/kPa, C/bar), and the electrical helpers capacitorMicrofarads,
// voltageUnbalancePercent and ampsAgainstRating with ELECTRICAL_CAUTION.

// --- the standard atmosphere (diagnostics/core/atmosphere.py) ---------------------------

// p = 101.325 x (1 - 2.25577e-5 x Z)^5.2559 kPa, Z in metres (ASHRAE Handbook -
// Fundamentals 2017, ch. 1, eq. 3; U.S. Standard Atmosphere 1976): what a gauge reads zero
// against at the site.
export function atmosphereKpa(elevationM) {
  const z = Number(elevationM ?? 0);
  if (!Number.isFinite(z) || z < -1000 || z > 11000) return NaN;
  return 101.325 * (1.0 - 2.25577e-5 * z) ** 5.2559;
}

// --- reading a saturation table (diagnostics/core/saturation/lookup.py, _Uniform.at) ---

const EDGE = 1e-9; // slack, in grid steps, for a value a rounding error off the table's ends

function readGrid(grid, x) {
  const values = grid.values;
  const last = values.length - 1;
  const invStep = last / (grid.last - grid.first);
  const s = (x - grid.first) * invStep;
  if (!(s >= -EDGE && s <= last + EDGE)) return NaN; // off the table (and NaN)
  const i = Math.min(Math.max(Math.trunc(s), 0), last - 1);
  return values[i] + (values[i + 1] - values[i]) * (s - i);
}

function lnOf(pKpaAbs) {
  return pKpaAbs > 0 ? Math.log(pKpaAbs) : -Infinity;
}

/** Dew or bubble temperature (C) at an absolute pressure (kPa); NaN off the table. */
export function saturationTempC(table, curve, pKpaAbs) {
  return readGrid(table.curves[curve].temp_of_ln_p, lnOf(pKpaAbs));
}

/** Dew or bubble pressure (kPa absolute) at a temperature (C); NaN off the table. */
export function saturationPressureKpaAbs(table, curve, tC) {
  return Math.exp(readGrid(table.curves[curve].ln_p_of_temp, tC));
}

function midTempC(table, p) {
  return 0.5 * (saturationTempC(table, "dew", p) + saturationTempC(table, "bubble", p));
}

// The pressure whose mid-point temperature (dew + bubble) / 2 is tC: two secant steps in
// ln p from the dew and bubble pressures at tC (targets.mid_point_pressure_kpa_abs).
function midPointPressureKpaAbs(table, tC) {
  let x1 = Math.log(saturationPressureKpaAbs(table, "dew", tC));
  let x2 = Math.log(saturationPressureKpaAbs(table, "bubble", tC));
  let m1 = midTempC(table, Math.exp(x1));
  let m2 = midTempC(table, Math.exp(x2));
  for (let step = 0; step < 2; step += 1) {
    const span = m2 - m1;
    const x3 = Math.abs(span) > 1e-9 ? x1 + ((tC - m1) * (x2 - x1)) / span : x1;
    const m3 = midTempC(table, Math.exp(x3));
    if (Math.sign(m3 - tC) === Math.sign(m1 - tC)) {
      x1 = x3;
      m1 = m3;
    } else {
      x2 = x3;
      m2 = m3;
    }
  }
  return Math.exp(Math.abs(m1 - tC) <= Math.abs(m2 - tC) ? x1 : x2);
}

/** The absolute pressure whose saturation temperature on the unit's basis is tC. */
export function basisPressureKpaAbs(table, tC, basis) {
  return basis === "mid_point"
    ? midPointPressureKpaAbs(table, tC)
    : saturationPressureKpaAbs(table, "dew", tC);
}

// --- judging a metric (diagnostics/core/scoring.py ok_band and grade) -------------------

const STATUS = ["ok", "watch", "fault", "not_scored"];

function num(x) {
  return x === null || x === undefined || x === "" ? NaN : Number(x);
}

function orNull(x) {
  return Number.isFinite(x) ? x : null;
}

// A rule's edge: an offset from the target, "range" (the target's own end), or null (that
// side is never judged).
function edge(rule, offset, target, own, sign) {
  if (offset === "range") return own;
  if (offset === null || offset === undefined) return sign * Infinity;
  return rule.relative ? target * (1.0 + offset) : target + offset;
}

function grade(rule, measured, target, ownLow, ownHigh, margin) {
  let low = edge(rule, rule.ok_low, target, ownLow, -1);
  let high = edge(rule, rule.ok_high, target, ownHigh, 1);
  if (rule.margin_from && margin !== undefined) {
    low -= margin;
    high += margin;
  }
  const scored =
    Number.isFinite(measured) && !Number.isNaN(low) && !Number.isNaN(high) && !Number.isNaN(target);
  let status = 3;
  if (scored) {
    const above = measured - high;
    const below = low - measured;
    const faultHigh = rule.fault_high === null ? Infinity : rule.fault_high;
    const faultLow = rule.fault_low === null ? Infinity : rule.fault_low;
    const scale = rule.relative ? Math.abs(target) : 1.0;
    const isFault =
      (above > 0 && above > faultHigh * scale) || (below > 0 && below > faultLow * scale);
    status = (above > 0 || below > 0 ? 1 : 0) + (isFault ? 1 : 0);
  }
  return { low, high, status };
}

// --- the live numbers ---------------------------------------------------------------

const CYCLE_METRICS = new Set([
  "evaporator_td",
  "condenser_split",
  "superheat",
  "subcooling",
  "discharge_line_temp",
  "compression_ratio",
]);

function resolved(targets, name) {
  const t = (targets.targets || {})[name] || {};
  return { value: num(t.value), low: num(t.low), high: num(t.high) };
}

function sideTargets(temps, table, basis, atm) {
  const [target, low, high] = temps.map((t) =>
    table && Number.isFinite(t) ? basisPressureKpaAbs(table, t, basis) - atm : NaN,
  );
  return {
    target_c: orNull(temps[0]),
    low_c: orNull(temps[1]),
    high_c: orNull(temps[2]),
    target_kpa_gauge: orNull(target),
    low_kpa_gauge: orNull(low),
    high_kpa_gauge: orNull(high),
  };
}

/**
 * Everything the phone shows while the gauges are on: saturation temperatures at suction
 * and head, superheat (from the dew point at suction) and subcooling (from the bubble point
 * at head), the evaporating and condensing targets on the unit's basis (also as the gauge
 * pressure to aim for) and each metric with its status, as the server will judge it.
 *
 * readings (SI, any may be null): box_temp_c, entering_air_temp_c, suction_kpa_gauge,
 * suction_line_temp_c, head_kpa_gauge, liquid_line_temp_c; optionally
 * discharge_line_temp_c, compressor_running and in_defrost (true, false or null).
 */
export function liveNumbers({ tables, targets, elevationM, readings }) {
  const r = readings || {};
  const designation = targets.refrigerant.designation;
  const table = (tables || {})[designation] || null;
  const basis = targets.design_temperature_basis;
  const mid = basis === "mid_point";
  const waterCooled = targets.condenser_type === "water";
  const atm = atmosphereKpa(elevationM ?? targets.site.elevation_m);
  const look = (curve, p) => (table ? saturationTempC(table, curve, p) : NaN);

  // the gauges made absolute (batch._saturation); a reading below a vacuum reads nothing
  const suction = num(r.suction_kpa_gauge) + atm;
  const head = num(r.head_kpa_gauge) + atm;
  const pS = suction > 0 ? suction : NaN;
  const pH = head > 0 ? head : NaN;
  const critical = table ? table.critical_pressure_kpa_abs : NaN;
  const transcritical = pH >= critical;
  const evapDew = look("dew", pS);
  const evapBub = look("bubble", pS);
  const condDew = transcritical ? NaN : look("dew", pH);
  const condBub = transcritical ? NaN : look("bubble", pH);
  const slopeS = look("dew", pS + 1.0) - evapDew; // per targets.judgement.instruments
  const slopeH = look("bubble", pH + 1.0) - condBub;

  // targets from the reading's own conditions, the box falling back to the design box
  const box = num(r.box_temp_c);
  const air = num(r.entering_air_temp_c);
  const td = resolved(targets, "evap_td_k");
  const split = resolved(targets, "condenser_split_k");
  const designBox = resolved(targets, "box_temp_c");
  const boxForTarget = Number.isNaN(box) ? designBox.value : box;
  const evapTarget = boxForTarget - td.value;
  const evapBase = evapTarget + td.value;
  const condTarget = waterCooled ? NaN : air + split.value;
  const condBase = condTarget - split.value;
  const evapTemps = [evapTarget, evapBase - td.high, evapBase - td.low];
  const condTemps = transcritical
    ? [NaN, NaN, NaN]
    : [condTarget, condBase + split.low, condBase + split.high];

  // the values derived from the readings (batch._derived)
  const evapOnBasis = mid ? 0.5 * (evapDew + evapBub) : evapDew;
  const condOnBasis = mid ? 0.5 * (condDew + condBub) : condDew;
  const superheat = num(r.suction_line_temp_c) - evapDew;
  const subcooling = condBub - num(r.liquid_line_temp_c);
  const evaporatorTd = box - evapOnBasis;
  const condenserSplit = waterCooled ? NaN : condOnBasis - air;
  const ratio = pH / pS;
  const compressionRatio = Number.isFinite(ratio) ? ratio : NaN;

  // stopped as reported; not reported, suction at or above head says it was not running
  const said = r.compressor_running;
  const running = said === true ? 1 : said === false ? 0 : pS >= pH ? 0 : NaN;
  const stopped = running === 0;
  const defrost = r.in_defrost === true;
  const limits = targets.limits || {};
  const superheatT = resolved(targets, "superheat_k");
  const subcoolingT = resolved(targets, "subcooling_k");
  const inputs = {
    box_temp: [box, designBox.value, undefined, undefined],
    evaporator_td: [evaporatorTd, td.value, undefined, undefined],
    condenser_split: [condenserSplit, split.value, undefined, undefined],
    superheat: [superheat, superheatT.value, superheatT.low, superheatT.high],
    subcooling: [subcooling, subcoolingT.value, subcoolingT.low, subcoolingT.high],
    discharge_line_temp: [num(r.discharge_line_temp_c), num(limits.discharge_line_max_c)],
    compression_ratio: [compressionRatio, num(limits.compression_ratio_max)],
    head_pressure: [num(r.head_kpa_gauge), num(limits.high_pressure_cutout_kpa_gauge)],
  };
  const instruments = targets.judgement.instruments;
  const marginOf = (slope) =>
    Math.hypot(instruments.thermometer_k, instruments.gauge_kpa * (Number.isNaN(slope) ? 0 : slope));
  const margins = { suction: marginOf(slopeS), head: marginOf(slopeH) };
  // a head the control holds up says nothing about the condenser (batch: held)
  const control = targets.head_pressure_control || {};
  const setpoint = resolved(targets, "head_setpoint_c");
  const held =
    air + split.value < setpoint.value &&
    condOnBasis >= num(control.held_low_c) &&
    condOnBasis <= num(control.held_high_c);

  const metrics = Object.entries(inputs).map(([name, [given, target, ownLow, ownHigh]]) => {
    const rule = targets.judgement.metrics[name];
    let measured = given;
    if (defrost && (CYCLE_METRICS.has(name) || name === "box_temp")) measured = NaN;
    if (stopped && CYCLE_METRICS.has(name)) measured = NaN;
    const margin = rule.margin_from ? margins[rule.margin_from] : undefined;
    const judged = grade(rule, measured, target, ownLow, ownHigh, margin);
    const status = name === "condenser_split" && held ? 3 : judged.status;
    return {
      name,
      measured: orNull(measured),
      target: orNull(target),
      low: orNull(judged.low),
      high: orNull(judged.high),
      status: STATUS[status],
    };
  });

  return {
    suction: { dew_c: orNull(evapDew), bubble_c: orNull(evapBub), basis_c: orNull(evapOnBasis) },
    head: { dew_c: orNull(condDew), bubble_c: orNull(condBub), basis_c: orNull(condOnBasis) },
    superheat_k: orNull(superheat),
    subcooling_k: orNull(subcooling),
    evaporator_td_k: orNull(evaporatorTd),
    condenser_split_k: orNull(condenserSplit),
    compression_ratio: orNull(compressionRatio),
    transcritical,
    evaporating: sideTargets(evapTemps, table, basis, atm),
    condensing: sideTargets(condTemps, table, basis, atm),
    metrics,
  };
}

// --- units the technician chooses (diagnostics/core/units.py) ---------------------------

// Exact factors: 1 lb = 0.45359237 kg; 1 psi = 0.45359237 x 9.80665 / 0.0254^2 Pa; 1 bar =
// 100 kPa. Gauge pressures stay gauge: only the scale changes.
const KG_PER_LB = 0.45359237;
const KPA_PER_PSI = (KG_PER_LB * 9.80665) / 0.0254 ** 2 / 1000.0;

const US = { temperature: "F", temperature_difference: "F", pressure: "psig", mass: "lb" };
const SI = { temperature: "C", temperature_difference: "K", pressure: "kPa", mass: "kg" };

/** The unit systems a technician picks from, and the unit each quantity is shown in; "us"
 * and "si" name the first two as the API's ``?units=`` does. */
export const SYSTEMS = {
  F_psig: US,
  C_kPa: SI,
  C_bar: { temperature: "C", temperature_difference: "K", pressure: "bar", mass: "kg" },
  us: US,
  si: SI,
};

const TO_DISPLAY = {
  temperature: { F: (c) => c * 1.8 + 32.0, C: (c) => c },
  temperature_difference: { F: (k) => k * 1.8, K: (k) => k },
  pressure: { psig: (kpa) => kpa / KPA_PER_PSI, kPa: (kpa) => kpa, bar: (kpa) => kpa / 100.0 },
  mass: { lb: (kg) => kg / KG_PER_LB, kg: (kg) => kg },
};

const FROM_DISPLAY = {
  temperature: { F: (f) => (f - 32.0) / 1.8, C: (c) => c },
  temperature_difference: { F: (f) => f / 1.8, K: (k) => k },
  pressure: { psig: (psi) => psi * KPA_PER_PSI, kPa: (kpa) => kpa, bar: (bar) => bar * 100.0 },
  mass: { lb: (lb) => lb * KG_PER_LB, kg: (kg) => kg },
};

function convert(table, value, quantity, system) {
  const unit = (SYSTEMS[system] || {})[quantity];
  if (!unit) throw new Error(`no ${quantity} unit in the system ${system}`);
  if (value === null || value === undefined || !Number.isFinite(Number(value))) return null;
  return table[quantity][unit](Number(value));
}

/** A value in SI (C, K, kPa gauge, kg) as shown in ``system`` (F_psig, C_kPa, C_bar). */
export function toDisplay(valueSi, quantity, system) {
  return convert(TO_DISPLAY, valueSi, quantity, system);
}

/** A value typed in ``system``'s unit for ``quantity``, in SI. */
export function fromDisplay(value, quantity, system) {
  return convert(FROM_DISPLAY, value, quantity, system);
}

// --- electrical helpers -----------------------------------------------------------------
// These helpers only do the arithmetic; the app shows ELECTRICAL_CAUTION beside them.

/** The cautions to show with every electrical helper. */
export const ELECTRICAL_CAUTION =
  "Live circuits can kill. Measure with meters rated for the circuit, lock out and tag out " +
  "before touching terminals, and discharge a capacitor through a resistor before handling " +
  "it. Local codes and licensed practice come first.";

/**
 * The capacitance (uF) a running capacitor shows from the current through it and the
 * voltage across it: its reactance is Xc = V / A = 1 / (2 pi f C), so
 * C = A / (2 pi f V) farads = 10^6 x A / (2 pi f V) uF. At 60 Hz 10^6 / (2 pi 60) is
 * 2652.6, the trade's "2652 x A / V" (common practice); at 50 Hz it is 3183.1.
 */
export function capacitorMicrofarads(amps, volts, hertz = 60) {
  const a = num(amps);
  const v = num(volts);
  const f = num(hertz);
  if (!(a >= 0 && v > 0 && f > 0)) return null;
  return (1e6 * a) / (2 * Math.PI * f * v);
}

/**
 * Voltage unbalance as NEMA MG 1 (14.36) defines it: the largest deviation of the three
 * line-to-line voltages from their average, over the average, in %; null unless three
 * positive readings are given (as the server, diagnostics/core/electrical.py).
 */
export function voltageUnbalancePercent(volts) {
  const v = (volts || []).map(num);
  if (v.length !== 3 || !v.every(Number.isFinite)) return null;
  const mean = (v[0] + v[1] + v[2]) / 3.0;
  if (!(mean > 0)) return null;
  const deviation = Math.max(Math.abs(v[0] - mean), Math.abs(v[1] - mean), Math.abs(v[2] - mean));
  return (100.0 * deviation) / mean;
}

/**
 * The highest leg's current against the nameplate: as a share of RLA (a running compressor
 * above its RLA is drawing more than it was rated for) and of LRA (a compressor that does
 * not start draws close to its LRA), in %; null where a rating or a reading is missing.
 */
export function ampsAgainstRating(amps, rla, lra) {
  const legs = (amps || []).map(num).filter(Number.isFinite);
  if (legs.length === 0) return { highest_a: null, percent_of_rla: null, percent_of_lra: null };
  const highest = Math.max(...legs);
  const share = (rating) => (num(rating) > 0 ? (100.0 * highest) / num(rating) : null);
  return { highest_a: highest, percent_of_rla: share(rla), percent_of_lra: share(lra) };
}
