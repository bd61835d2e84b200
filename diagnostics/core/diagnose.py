"""The visit diagnosis: one implementation for a single reading and for a million.

The entry point of the core's judgement, built from modules of one job each:

- ``inputs``: readings and unit designs as columns (``ReadingColumns``, ``UnitColumns``);
- ``design``: each unit's design quantities resolved (value, ok range, origin);
- ``batch``: ``diagnose_batch``, every row judged at once in stages (saturation, derived
  values, graded metrics with what is excused, energy, signals and findings);
- ``stored`` and ``encode``: the stored form, a versioned JSON document of numbers and
  codes (its layout and its readers, one per version), written column-wise for a batch;
- ``details`` and ``texts``: the stored form read back with its texts (reasons, sources,
  evidence, advice, cautions), once per distinct case.

A single POST (``diagnose_row``), a rescore and any page or report read diagnoses through the
stored form, so what is shown is always what was stored.
"""

from __future__ import annotations

import orjson

from diagnostics.core.batch import (
    ALGORITHM_VERSION,
    BatchResult,
    diagnose_batch,
)
from diagnostics.core.details import Details, Row, typed_details
from diagnostics.core.encode import STORED_DERIVED, documents, stored_columns
from diagnostics.core.inputs import (
    READING_FLAGS,
    READING_SCALARS,
    ReadingColumns,
    UnitColumns,
)
from diagnostics.core.numeric import optional
from diagnostics.core.stored import DOCUMENT_VERSION, read_details, read_numbers
from diagnostics.core.types import DerivedValues, Diagnosis, Reading, UnitDesign

__all__ = [
    "ALGORITHM_VERSION",
    "DOCUMENT_VERSION",
    "READING_FLAGS",
    "READING_SCALARS",
    "STORED_DERIVED",
    "BatchResult",
    "Details",
    "ReadingColumns",
    "Row",
    "UnitColumns",
    "details",
    "diagnose",
    "diagnose_batch",
    "diagnose_row",
    "read_details",
    "read_numbers",
    "row_diagnosis",
    "stored_columns",
    "typed_details",
]


def details(res: BatchResult) -> list[Details]:
    """Every row's targets, metrics, findings and cautions with their texts, read back from
    its stored document as any stored diagnosis is."""
    return read_details([orjson.loads(d) for d in documents(res)])


def _row_derived(res: BatchResult, i: int) -> DerivedValues:
    return DerivedValues(
        suction_kpa_abs=optional(res.derived["suction_kpa_abs"][i]),
        head_kpa_abs=optional(res.derived["head_kpa_abs"][i]),
        evaporating_dew_c=optional(res.derived["evaporating_dew_c"][i]),
        evaporating_bubble_c=optional(res.derived["evaporating_bubble_c"][i]),
        evaporating_c=optional(res.derived["evaporating_c"][i]),
        condensing_dew_c=optional(res.derived["condensing_dew_c"][i]),
        condensing_bubble_c=optional(res.derived["condensing_bubble_c"][i]),
        condensing_c=optional(res.derived["condensing_c"][i]),
        superheat_k=optional(res.derived["superheat_k"][i]),
        subcooling_k=optional(res.derived["subcooling_k"][i]),
        evaporator_td_k=optional(res.derived["evaporator_td_k"][i]),
        condenser_split_k=optional(res.derived["condenser_split_k"][i]),
        compression_ratio=optional(res.derived["compression_ratio"][i]),
        transcritical=bool(res.derived["transcritical"][i] == 1.0),
        gas_cooler_approach_k=optional(res.derived["gas_cooler_approach_k"][i]),
        voltage_unbalance_pct=optional(res.derived["voltage_unbalance_pct"][i]),
        current_unbalance_pct=optional(res.derived["current_unbalance_pct"][i]),
        nema_derating_factor=optional(res.derived["nema_derating_factor"][i]),
    )


def row_diagnosis(res: BatchResult, i: int) -> Diagnosis:
    """Row ``i`` as the dataclasses a single POST returns: its stored form read back (the
    same code as for any stored row), typed, plus every derived value."""
    (row,) = read_details([orjson.loads(documents(res)[i])])
    targets, metrics, found, cautions = typed_details(row)
    return Diagnosis(
        score=optional(res.score[i]),
        algorithm_version=res.algorithm_version,
        targets=targets,
        metrics=metrics,
        findings=found,
        cautions=cautions,
        energy_penalty_pct=optional(res.energy_penalty_pct[i]),
        derived=_row_derived(res, i),
        glide_choice=row["glide_choice"],
    )


def diagnose(unit: UnitDesign, reading: Reading, elevation_m: float = 0.0) -> Diagnosis:
    """Diagnose one reading set: the batch code on a batch of one, row 0 as dataclasses."""
    result = diagnose_batch([unit], ReadingColumns.from_readings([reading]), elevation_m)
    return row_diagnosis(result, 0)


def diagnose_row(unit: UnitDesign, reading: Reading, elevation_m: float = 0.0) -> Row:
    """One reading set as stored (the version, ``stored_columns`` of a batch of one, the
    document parsed as the model field holds it), without writing its texts: what the
    service stores for a single POST."""
    result = diagnose_batch([unit], ReadingColumns.from_readings([reading]), elevation_m)
    row = {name: values[0] for name, values in stored_columns(result).items()}
    row["document"] = orjson.loads(row["document"])
    return {"algorithm_version": result.algorithm_version, **row}
