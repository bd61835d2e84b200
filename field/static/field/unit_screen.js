/* At the unit: what it is, how it was last judged, the checks before climbing, and the
   forms that record what was measured and done (each saved to the outbox first). */
import { ApiError } from "./api.js";
import { checklist, keepChecklist, liveInputs, readingSets, unitDetails, visit as loadVisit } from "./data.js";
import { badge, caution, field, fmt, h, num, numberInput, screen } from "./dom.js";
import { discard, enqueue, newClientId, pending } from "./outbox.js";
import { capacitorCheck, electricalCaution, electricalLines, livePanel, readingsSi } from "./live_panel.js";
import { partForm } from "./part_form.js";
import { kvGet, kvSet } from "./store.js";
import { label, shown, siShown, wireUnits } from "./units.js";

const WORDS = {
  txv: "Thermostatic expansion valve (TXV)",
  eev: "Electronic expansion valve (EEV)",
  capillary: "Capillary tube",
  fixed_orifice: "Fixed orifice",
  none: "None",
  fan_cycling: "Fan cycling",
  flooding: "Flooding valve",
  variable_speed: "Variable-speed fans",
  other: "Other",
  dew: "dew point",
  mid_point: "mid-point",
  medium_temp: "Medium temperature (cooler)",
  low_temp: "Low temperature (freezer)",
  reach_in: "Reach-in",
  ice_machine: "Ice machine",
};
const word = (value, unknown = "Not known") => (value === null || value === undefined || value === "" ? unknown : WORDS[value] || value);

function quantity(value, unit) {
  const s = shown(value, unit);
  return s.value === null ? "Not on record (application default)" : `${fmt(s.value)} ${s.unit}`;
}

function rows(pairs) {
  return h("dl", { class: "facts" }, pairs.filter(Boolean).map(([term, value]) => [h("dt", {}, term), h("dd", {}, value)]));
}

function capacitorText(c) {
  const kind = c.kind === "run_capacitor" ? "Run capacitor" : "Start capacitor";
  const band = c.rated_uf ? `${c.rated_uf} µF ±${c.tolerance_pct ?? 6} %` : `${c.rating_uf_min}–${c.rating_uf_max} µF`;
  return [kind, `${band}${c.rating_volts ? `, ${c.rating_volts} V` : ""}`];
}

function nameplate(unit, refrigerant, components) {
  const u = unit.units || {};
  const dt = u.temperature_difference;
  const caps = components.filter((c) => (c.kind === "run_capacitor" || c.kind === "start_capacitor") && !c.removed_on);
  return h(
    "section",
    { class: "card" },
    h("h2", {}, "Nameplate and design"),
    rows([
      ["Refrigerant", unit.refrigerant ? `${unit.refrigerant}${refrigerant ? `, safety class ${refrigerant.safety_class}` : ""}` : "Not known"],
      ["Application", word(unit.application)],
      ["Metering device", word(unit.metering_device)],
      ["Receiver", unit.has_receiver === null ? "Not known" : unit.has_receiver ? "Yes" : "No"],
      ["Head-pressure control", word(unit.head_pressure_control)],
      ["Design box", quantity(unit.design_box_temp, u.temperature)],
      ["Evaporator TD", `${quantity(unit.design_evap_td, dt)} (on the ${word(unit.design_temperature_basis)})`],
      ["Condenser split", `${quantity(unit.design_condenser_split, dt)} (on the ${word(unit.design_temperature_basis)})`],
      ["Superheat band", unit.superheat_min === null && unit.superheat_max === null ? "Application default" : `${quantity(unit.superheat_min, dt)} to ${quantity(unit.superheat_max, dt)}`],
      ["Electrical", `${unit.nameplate_volts ?? "?"}${unit.nameplate_volts_max ? `–${unit.nameplate_volts_max}` : ""} V, ${unit.phase ?? "?"} phase, ${unit.hertz ?? "?"} Hz`],
      ["RLA / LRA", `${unit.rla_a ?? "—"} A / ${unit.lra_a ?? "—"} A`],
      ...caps.map(capacitorText),
    ]),
  );
}

function flammableCaution(refrigerant) {
  if (!refrigerant || !refrigerant.flammable) return null;
  return caution(
    `Flammable refrigerant (${refrigerant.designation}, safety class ${refrigerant.safety_class})`,
    "No open flames or sparks near the system; ventilate and check the air with a leak detector rated for flammable refrigerants before brazing or opening the circuit.",
    "Use recovery equipment, tools and cylinders rated for this refrigerant, and follow local codes and your licensed practice.",
  );
}

function lastDiagnosis(diagnosis) {
  if (!diagnosis) return h("section", { class: "card" }, h("h2", {}, "Last diagnosis"), h("p", {}, "No diagnosis on record yet."));
  const d = diagnosis.diagnosis || {};
  return h(
    "section",
    { class: "card" },
    h("h2", {}, "Last diagnosis"),
    h("p", {}, `${new Date(diagnosis.taken_at).toLocaleDateString()} · score ${d.score ?? "not scored"}`),
    metricList(d.metrics || []),
    (d.findings || []).length ? h("ul", { class: "findings" }, d.findings.map((f) => h("li", {}, h("strong", {}, f.title), f.deciding_check ? ` — check: ${f.deciding_check}` : ""))) : null,
  );
}

function metricList(metrics) {
  const judged = metrics.filter((m) => m.measured !== null && m.measured !== undefined);
  if (!judged.length) return null;
  return h(
    "ul",
    { class: "metrics" },
    judged.map((m) => {
      const value = shown(m.measured, m.unit);
      return h("li", {}, badge(m.status), ` ${m.name.replaceAll("_", " ")}: ${fmt(value.value)} ${value.unit || ""}`);
    }),
  );
}

function openFlags(flags) {
  if (!flags.length) return null;
  return h(
    "section",
    { class: "card" },
    h("h2", {}, "Open flags"),
    h("ul", {}, flags.map((f) => h("li", {}, h("strong", {}, `${f.severity === "urgent" ? "‼ Urgent" : f.severity === "warning" ? "! Warning" : "ℹ Notice"}: `), f.summary))),
  );
}

const CHECKS = [
  ["evaporator_fans_running", "Evaporator fans running?"],
  ["coil_iced", "Ice on the evaporator coil?"],
  ["call_for_cooling", "Control calling for cooling?"],
  ["condenser_clear", "Condenser coil clear (not blocked or dirty)?"],
  ["condenser_fan_running", "Condenser fan running?"],
];

function triState(name, value, onchange) {
  const choice = (text, v) =>
    h("label", { class: "choice" }, h("input", { type: "radio", name, value: String(v), checked: value === v, onchange: () => onchange(v) }), ` ${text}`);
  return [choice("Yes", true), choice("No", false), choice("Not checked", null)];
}

function preClimb(visitId, unitId, answers) {
  return h(
    "section",
    { class: "card" },
    h("h2", { id: "checks" }, "Before climbing"),
    h("p", { class: "hint" }, "Answers go with every reading set of this unit."),
    CHECKS.map(([name, question]) =>
      h(
        "fieldset",
        { class: "tri" },
        h("legend", {}, question),
        triState(`check-${name}`, answers[name] ?? null, (v) => {
          answers[name] = v;
          keepChecklist(visitId, unitId, answers);
        }),
      ),
    ),
  );
}

const MEASURED = [
  ["box_temp", "Box air", "temperature"],
  ["entering_air_temp", "Air entering the condenser", "temperature"],
  ["suction_pressure", "Suction pressure", "pressure"],
  ["suction_line_temp", "Suction line (evaporator outlet)", "temperature"],
  ["head_pressure", "Head pressure", "pressure"],
  ["liquid_line_temp", "Liquid line", "temperature"],
  ["discharge_line_temp", "Discharge line", "temperature"],
];

export const STAGES = {
  as_found: "As found",
  adjusting: "While adjusting",
  as_left: "As left",
};
/* The condenser check has no field of its own in a reading set: it goes into the notes. */
const CONDENSER_NOTES = ["Condenser coil clear.", "Condenser coil blocked or dirty."];

function readingForm(visitId, unit, answers, prior, saved, live) {
  const body = prior ? prior.body : {};
  const inputs = {};
  const stage = h(
    "select",
    { name: "stage" },
    Object.entries(STAGES).map(([value, text]) =>
      h("option", { value, selected: value === (body.stage || "as_found") }, text),
    ),
  );
  const measured = MEASURED.map(([name, text, q]) => {
    inputs[name] = numberInput(name, body[name]);
    return field(`${text} (${label(q)})`, inputs[name]);
  });
  const amps = [0, 1, 2].map((i) => numberInput(`amps-${i}`, (body.compressor_amps || [])[i]));
  const volts = [0, 1, 2].map((i) => numberInput(`volts-${i}`, (body.supply_volts || [])[i]));
  inputs.run_capacitor_uf = numberInput("run_capacitor_uf", body.run_capacitor_uf);
  inputs.start_capacitor_uf = numberInput("start_capacitor_uf", body.start_capacitor_uf);
  const compressor = h("fieldset", { class: "tri" }, h("legend", {}, "Compressor running?"), triState("compressor_running", body.compressor_running ?? null, (v) => { compressorRunning = v; }));
  let compressorRunning = body.compressor_running ?? null;
  let defrost = body.in_defrost ?? null;
  const defrostSet = h("fieldset", { class: "tri" }, h("legend", {}, "In defrost?"), triState("in_defrost", defrost, (v) => { defrost = v; }));
  const sight = h("select", { name: "sight_glass" }, [["", "Not looked at"], ["clear", "Clear"], ["bubbles", "Bubbles"], ["none", "No sight glass"]].map(([v, t]) => h("option", { value: v, selected: (body.sight_glass || "") === v }, t)));
  const notes = h("textarea", { name: "notes", rows: 3, maxlength: 2000 }, CONDENSER_NOTES.reduce((text, n) => text.replace(n, ""), body.notes || "").trim());
  const message = h("p", { class: "problem", role: "alert" });

  const legs = (list) => list.map(num).filter((v) => v !== null);
  const collect = () => {
    const values = {};
    for (const [name, input] of Object.entries(inputs)) values[name] = num(input);
    return values;
  };
  const panel = live ? livePanel(live, unit.metering_device === "txv") : null;
  const electrical = h("ul", { class: "metrics", "aria-live": "polite" });
  const recompute = () => {
    if (panel) panel.update(readingsSi(collect(), compressorRunning, defrost));
    electrical.replaceChildren(...electricalLines(live && live.targets, legs(amps), legs(volts)));
  };

  async function save(event) {
    event.preventDefault();
    const values = collect();
    const typed = Object.values(values).some((v) => v !== null) || legs(amps).length || legs(volts).length;
    if (!typed) {
      message.textContent = "✕ Type at least one measurement.";
      return;
    }
    const condenser = answers.condenser_clear === true ? CONDENSER_NOTES[0] : answers.condenser_clear === false ? CONDENSER_NOTES[1] : "";
    const text = [notes.value.trim(), condenser].filter(Boolean).join(" ");
    const record = {
      client_id: newClientId(),
      unit: unit.id,
      taken_at: prior ? prior.body.taken_at : new Date().toISOString(),
      stage: stage.value,
      units: wireUnits(),
      ...values,
      compressor_amps: legs(amps),
      supply_volts: legs(volts),
      compressor_running: compressorRunning,
      in_defrost: defrost,
      sight_glass: sight.value,
      evaporator_fans_running: answers.evaporator_fans_running ?? null,
      coil_iced: answers.coil_iced ?? null,
      call_for_cooling: answers.call_for_cooling ?? null,
      condenser_fan_running: answers.condenser_fan_running ?? null,
      notes: text,
    };
    if (prior && prior.stored) {
      const { client_id: _unused, ...changes } = record;
      await enqueue({
        client_id: newClientId(),
        kind: "correct",
        method: "PATCH",
        visit: visitId,
        unit: unit.id,
        path: `visits/${visitId}/reading-sets/${prior.stored.id}/`,
        body: changes,
        label: `Correction of readings on ${unit.tag}`,
      });
      saved(record);
      return;
    }
    await enqueue({
      client_id: record.client_id,
      kind: "reading_set",
      visit: visitId,
      unit: unit.id,
      path: `visits/${visitId}/reading-sets/`,
      body: record,
      label: `${STAGES[stage.value]} readings on ${unit.tag}`,
      replaces: prior ? prior.client_id : undefined,
    });
    saved(record);
  }

  const form = h(
    "form",
    { class: "card reading-form", onsubmit: save, oninput: recompute, onchange: recompute },
    h("h2", {}, prior ? "Correct the readings" : "Gauges and thermometers"),
    field("Stage", stage),
    h("div", { class: "grid" }, measured),
    panel ? panel.panel : h("p", { class: "hint" }, "Live numbers need the unit's targets, which the phone fetches with signal."),
    h("fieldset", { class: "legs" }, h("legend", {}, "Compressor amps, one per leg (A)"), amps.map((a, i) => field(`Leg ${i + 1}`, a))),
    h("fieldset", { class: "legs" }, h("legend", {}, "Supply volts, line to line (V)"), volts.map((v, i) => field(`Pair ${i + 1}`, v))),
    electrical,
    h("div", { class: "grid" }, field("Run capacitor measured (µF)", inputs.run_capacitor_uf), field("Start capacitor measured (µF)", inputs.start_capacitor_uf)),
    compressor,
    defrostSet,
    field("Sight glass", sight),
    field("Notes", notes),
    message,
    h("button", { class: "button button--primary", type: "submit" }, "Save the readings"),
  );
  recompute();
  return form;
}

/* A pressure of a listed set: a stored one in SI (as asked for), one waiting as typed. */
function gauge(set, value) {
  if (value === null || value === undefined) return "—";
  if (set.state === "sent") return `${fmt(siShown(value, "pressure"))} ${label("pressure")}`;
  return `${value} ${set.units.pressure}`;
}

/* A set not yet sent can be withdrawn on the phone while there is no signal (with signal
   it may be on its way already). */
function readingHistory(sets, withdraw, correctHref) {
  if (!sets.length) return h("p", {}, "No readings on this unit yet on this visit.");
  return h(
    "ol",
    { class: "history" },
    sets.map((s) => {
      const stage = STAGES[s.stage] || s.stage;
      const superheat = s.diagnosis ? (s.diagnosis.metrics || []).find((m) => m.name === "superheat") : null;
      return h(
        "li",
        { class: "card" },
        h("p", {}, badge(s.state === "sent" ? "sent" : s.state), ` ${stage} · ${new Date(s.taken_at).toLocaleTimeString(undefined, { hour: "2-digit", minute: "2-digit" })}`),
        h("p", {}, `Suction ${gauge(s, s.suction_pressure)} · head ${gauge(s, s.head_pressure)}`),
        s.diagnosis ? h("p", {}, `Score ${s.diagnosis.score ?? "not scored"}`, superheat && superheat.measured !== null ? ` · superheat ${fmt(shown(superheat.measured, superheat.unit).value)} ${shown(superheat.measured, superheat.unit).unit}` : "") : h("p", { class: "muted" }, "The diagnosis appears when the office's server has the readings."),
        (s.state === "queued" && !navigator.onLine) || s.state === "rejected"
          ? h("button", { class: "button", type: "button", onclick: () => withdraw(s) }, "Withdraw (not sent)")
          : null,
        s.state === "sent" && s.id && correctHref
          ? h(
              "div",
              { class: "actions" },
              h("a", { class: "button", href: correctHref(s) }, "Correct"),
              h("button", { class: "button", type: "button", onclick: () => withdraw(s) }, "Withdraw"),
            )
          : null,
      );
    }),
  );
}

const WAIT_MINUTES = 5;

function txvHelp(unit) {
  if (unit.metering_device !== "txv") return null;
  const timer = h("p", { class: "timer", role: "status", "aria-live": "polite" });
  let until = null;
  let ticking = null;
  const tick = () => {
    const left = Math.max(0, Math.round((until - Date.now()) / 1000));
    timer.textContent = left ? `Wait ${Math.floor(left / 60)}:${String(left % 60).padStart(2, "0")} before the next reading.` : "✓ Settled: take the next reading (stage “while adjusting”, or “as left” when done).";
    if (!left) clearInterval(ticking);
  };
  const adjusted = () => {
    until = Date.now() + WAIT_MINUTES * 60000;
    clearInterval(ticking);
    ticking = setInterval(tick, 1000);
    tick();
  };
  return h(
    "section",
    { class: "card" },
    h("h2", {}, "Setting the TXV"),
    h("p", {}, "Superheat above its band: open the valve (opening lowers superheat). Below its band: close it (raises superheat)."),
    h("p", {}, "Which way the stem turns to open depends on the valve: check its maker's instructions. Change one thing at a time: common practice is a quarter turn, then wait several minutes for the system to settle before the next reading."),
    h("button", { class: "button", type: "button", onclick: adjusted }, `I turned it: start a ${WAIT_MINUTES}-minute wait`),
    timer,
  );
}

const EVENT_KINDS = {
  added: "Refrigerant added",
  recovered: "Refrigerant recovered",
  leak_found: "Leak found",
  leak_repaired: "Leak repaired",
  initial_verification: "Initial verification test",
  follow_up_verification: "Follow-up verification test",
};

async function refrigerantForm(visitId, unit, prior, saved) {
  const body = prior ? prior.body : {};
  const kind = h("select", { name: "kind" }, Object.entries(EVENT_KINDS).map(([v, t]) => h("option", { value: v, selected: (body.kind || "added") === v }, t)));
  const amount = numberInput("amount", body.amount);
  const cylinder = h("input", { name: "cylinder", value: body.cylinder || "", maxlength: 200 });
  const certification = h("input", { name: "certification_number", value: body.certification_number || (await kvGet("certification")) || "", maxlength: 100 });
  const notes = h("textarea", { name: "notes", rows: 2, maxlength: 2000 }, body.notes || "");
  const message = h("p", { class: "problem", role: "alert" });
  async function save(event) {
    event.preventDefault();
    const weighed = kind.value === "added" || kind.value === "recovered";
    const problems = [];
    if (weighed && !(num(amount) > 0)) problems.push("✕ Give the amount, above zero.");
    if (weighed && !certification.value.trim()) problems.push("✕ Give your certification number.");
    if (problems.length) {
      message.textContent = problems.join(" ");
      return;
    }
    await kvSet("certification", certification.value.trim());
    const record = { client_id: newClientId(), unit: unit.id, kind: kind.value, units: wireUnits(), notes: notes.value.trim() };
    if (weighed) record.amount = num(amount);
    if (cylinder.value.trim()) record.cylinder = cylinder.value.trim();
    if (certification.value.trim()) record.certification_number = certification.value.trim();
    await enqueue({ client_id: record.client_id, kind: "refrigerant_event", visit: visitId, unit: unit.id, path: `visits/${visitId}/refrigerant-events/`, body: record, label: `${EVENT_KINDS[kind.value]} on ${unit.tag}`, replaces: prior ? prior.client_id : undefined });
    saved();
  }
  return h(
    "form",
    { class: "card", onsubmit: save },
    h("h2", { id: "refrigerant" }, "Refrigerant"),
    field("What was done", kind),
    field(`Amount (${label("mass")})`, amount, "For refrigerant added or recovered."),
    field("Cylinder", cylinder, "The cylinder's number or label."),
    field("Your certification number", certification),
    field("Notes", notes),
    message,
    h("button", { class: "button button--primary", type: "submit" }, "Save the refrigerant record"),
  );
}

/* What a correction starts from: a record still in the outbox (its body as typed), or a
   stored reading set (its SI values shown in the technician's units). */
async function priorRecord(clientId, sets) {
  const waiting = (await pending()).find((e) => e.client_id === clientId);
  if (waiting) return waiting;
  const stored = sets.find((s) => s.client_id === clientId && s.state === "sent" && s.id);
  if (!stored) return null;
  const body = { ...stored };
  for (const [name, , quantity] of MEASURED) {
    const value = siShown(stored[name], quantity);
    body[name] = value === null ? null : Math.round(value * 100) / 100;
  }
  return { client_id: clientId, kind: "reading_set", stored, body };
}

export async function unitScreen(visitId, unitId, correcting) {
  const show = screen();
  let loaded;
  try {
    loaded = await loadVisit(visitId);
  } catch (error) {
    if (error instanceof ApiError && error.status === 401) return undefined;
    return show(h("p", { class: "problem" }, "This unit could not be loaded. Open it once with signal so the phone keeps it."), h("a", { class: "button", href: `#/visit/${visitId}` }, "Back to the visit"));
  }
  const unit = loaded.units.find((u) => u.id === unitId);
  if (!unit) return show(h("p", { class: "problem" }, "This unit is not on the visit."), h("a", { class: "button", href: `#/visit/${visitId}` }, "Back to the visit"));
  const refrigerant = loaded.refrigerants.get(unit.refrigerant);
  const [details, answers, sets, live] = await Promise.all([
    unitDetails(unitId),
    checklist(visitId, unitId),
    readingSets(visitId),
    liveInputs(unit).catch(() => null),
  ]);
  const prior = correcting ? await priorRecord(correcting, sets) : null;
  const waiting = (await pending()).filter((e) => e.visit === visitId);
  const open =
    (loaded.record.status === "in_progress" || waiting.some((e) => e.kind === "start")) && !waiting.some((e) => e.kind === "submit");
  /* A set not sent leaves the outbox; a stored one is withdrawn on the server (DELETE,
     kept in the visit's history there), through the outbox like any other change. */
  const withdraw = async (set) => {
    if (set.state !== "sent") await discard(set.client_id);
    else
      await enqueue({
        client_id: newClientId(),
        kind: "withdraw",
        method: "DELETE",
        visit: visitId,
        unit: unitId,
        path: `visits/${visitId}/reading-sets/${set.id}/`,
        withdrawn: set.client_id,
        label: `Withdrawal of readings on ${unit.tag}`,
      });
    redrawHistory();
  };
  const correctHref = open ? (set) => `#/visit/${visitId}/unit/${unitId}?correct=${set.client_id}` : null;
  const listed = (all) => readingHistory(all.filter((s) => s.unit === unitId), withdraw, correctHref);
  const history = h("div", { id: "history" }, listed(sets));
  const redrawHistory = async () => history.replaceChildren(listed(await readingSets(visitId)));
  const confirm = h("p", { class: "saved", role: "status", "aria-live": "polite" });
  const afterSave = async (what) => {
    if (prior) {
      location.hash = `#/visit/${visitId}/unit/${unitId}`;
      return;
    }
    confirm.textContent = `✓ ${what} saved on the phone${navigator.onLine ? "; sending" : "; it will be sent when there is signal"}.`;
    redrawHistory();
  };
  const readingSaved = () => {
    afterSave("Readings");
    form.replaceWith((form = readingForm(visitId, unit, answers, null, readingSaved, live)));
  };
  let form = readingForm(visitId, unit, answers, prior && prior.kind === "reading_set" ? prior : null, readingSaved, live);
  const refrigerantCard = async (from) => {
    const card = await refrigerantForm(visitId, unit, from, async () => {
      afterSave("Refrigerant record");
      card.replaceWith(await refrigerantCard(null));
    });
    return card;
  };
  const partCard = () => {
    const card = partForm(visitId, unit, details.components, () => {
      afterSave("Part");
      card.replaceWith(partCard());
    });
    return card;
  };
  const jump = (target, text) => h("button", { class: "button", type: "button", onclick: () => document.getElementById(target).scrollIntoView() }, text);
  show(
    h("p", {}, h("a", { href: `#/visit/${visitId}` }, "← The visit")),
    h("h1", {}, unit.tag),
    unit.description ? h("p", { class: "lead" }, unit.description) : null,
    open ? h("nav", { class: "actions jump", "aria-label": "On this screen" }, jump("checks", "Checks"), jump("readings", "Readings"), jump("refrigerant", "Refrigerant"), jump("parts", "Parts")) : null,
    flammableCaution(refrigerant),
    nameplate(unit, refrigerant, details.components),
    lastDiagnosis(details.diagnosis),
    openFlags(details.flags),
    preClimb(visitId, unitId, answers),
    open || prior ? [h("h2", { id: "readings" }, "Readings on this visit"), history, confirm, electricalCaution(), form, txvHelp(unit), capacitorCheck(live && live.targets), await refrigerantCard(prior && prior.kind === "refrigerant_event" ? prior : null), partCard()] : h("p", { class: "hint" }, waiting.some((e) => e.kind === "submit") ? "The visit is submitted on the phone: nothing more can be recorded." : "Start the visit to record readings."),
  );
  show.whenSent(redrawHistory);
  return undefined;
}
