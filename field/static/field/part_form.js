/* A part fitted at the unit: what went in (a capacitor with its rating as printed on the
   can), which recorded part it replaces, and why. Saved to the outbox like every record. */
import { field, h, num, numberInput } from "./dom.js";
import { enqueue, newClientId } from "./outbox.js";

export const PART_KINDS = {
  run_capacitor: "Run capacitor",
  start_capacitor: "Start capacitor",
  start_relay: "Start relay",
  hard_start_kit: "Hard-start kit",
  contactor: "Contactor",
  condenser_fan_motor: "Condenser fan motor",
  evaporator_fan_motor: "Evaporator fan motor",
  compressor: "Compressor",
  metering_valve: "Metering valve",
};
const CAPACITORS = new Set(["run_capacitor", "start_capacitor"]);

/* The recorded parts of this kind still on the unit, for "replaces". */
function fittedOfKind(components, kind) {
  return components.filter((c) => c.kind === kind && !c.removed_on);
}

export function partForm(visitId, unit, components, saved) {
  const kind = h("select", { name: "part_kind" }, Object.entries(PART_KINDS).map(([v, t]) => h("option", { value: v }, t)));
  const rated = numberInput("rated_uf");
  const tolerance = numberInput("tolerance_pct");
  const low = numberInput("rating_uf_min");
  const high = numberInput("rating_uf_max");
  const volts = numberInput("rating_volts");
  const replaces = h("select", { name: "replaces" });
  const reason = h("input", { name: "reason", maxlength: 200 });
  const message = h("p", { class: "problem", role: "alert" });
  const rating = h(
    "fieldset",
    {},
    h("legend", {}, "Rating as printed on the new part"),
    h("p", { class: "hint" }, "A run capacitor: its µF and ± %. A start capacitor: its range, lowest to highest µF."),
    h("div", { class: "pair" }, field("Rated (µF)", rated), field("Tolerance (± %)", tolerance)),
    h("div", { class: "pair" }, field("Range from (µF)", low), field("Range to (µF)", high)),
    field("Volts", volts),
  );
  const chosen = () => {
    const kept = fittedOfKind(components, kind.value);
    replaces.replaceChildren(
      h("option", { value: "" }, kept.length ? "No recorded part (an addition)" : "No recorded part of this kind"),
      ...kept.map((c) => h("option", { value: String(c.id), selected: kept.length === 1 }, `${PART_KINDS[c.kind]} fitted ${c.installed_on || "on an unknown date"}`)),
    );
    rating.hidden = !CAPACITORS.has(kind.value);
  };
  kind.addEventListener("change", chosen);
  chosen();

  async function save(event) {
    event.preventDefault();
    const capacitor = CAPACITORS.has(kind.value);
    const printed = [rated, tolerance, low, high].map(num);
    if (capacitor && printed.every((v) => v === null)) {
      message.textContent = "✕ Give the new capacitor's rating as printed on it.";
      return;
    }
    if (!reason.value.trim()) {
      message.textContent = "✕ Say why the part was replaced.";
      return;
    }
    const record = { client_id: newClientId(), unit: unit.id, kind: kind.value, reason: reason.value.trim() };
    if (capacitor) {
      const [r, t, l, u] = printed;
      Object.assign(record, { rated_uf: r, tolerance_pct: t, rating_uf_min: l, rating_uf_max: u, rating_volts: num(volts) });
    }
    if (replaces.value) record.replaces = Number(replaces.value);
    await enqueue({ client_id: record.client_id, kind: "part", visit: visitId, unit: unit.id, path: `visits/${visitId}/parts-fitted/`, body: record, label: `${PART_KINDS[kind.value]} fitted on ${unit.tag}` });
    saved();
  }

  return h(
    "form",
    { class: "card", onsubmit: save },
    h("h2", { id: "parts" }, "Part replaced"),
    field("What went in", kind),
    rating,
    field("It replaces", replaces, "The recorded part is marked removed today."),
    field("Why", reason, "What you found: e.g. measured 31 µF against 45 µF rated."),
    message,
    h("button", { class: "button button--primary", type: "submit" }, "Save the part"),
  );
}
