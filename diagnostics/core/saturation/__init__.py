"""Saturation temperature <-> pressure for every refrigerant in the catalogue, read from tables.

Every target and score starts here: a gauge reading (made absolute with the site's elevation
by ``diagnostics.core.units``) becomes a dew or bubble temperature, and back. ``table`` is the
way in: it serves a refrigerant's ``SaturationTable`` from memory or disk, and builds it from
CoolProp on first use. How a table is read, and its range errors, is in ``lookup``; how it is
built, in ``build``. An unknown designation raises ``refrigerants.UnknownRefrigerant`` (a
KeyError).

Cache
-----
``table(designation, cache_dir)`` keeps one table per refrigerant in memory and one ``.npz``
file per refrigerant on disk, under ``<cache_dir>/saturation/``, named by the CoolProp version,
``TABLE_FORMAT`` and a digest of how the refrigerant is modelled. ``cache_dir`` defaults to
``$RIMEWATCH_CACHE_DIR``, else ``~/.cache/rimewatch``. Files are written to a temporary name
and renamed into place, so concurrent processes never read half a file. Building one table
takes 0.01 s for a pure fluid or a pseudo-pure blend and 0.5-3.5 s for a HEOS mixture
(R-448A, five components, is the slowest), so tables are built lazily, one refrigerant on its
first use; reading one back from disk takes about 1-10 ms.
"""

from __future__ import annotations

import hashlib
import json
import logging
import os
import tempfile
import threading
import zipfile
from pathlib import Path
from typing import Any

import CoolProp
import numpy as np

from diagnostics.core import refrigerants
from diagnostics.core.refrigerants import Refrigerant
from diagnostics.core.saturation.build import (
    TABLE_FORMAT,
    build_arrays,
    coolprop_pressure_kpa_abs,
    coolprop_temp_c,
    table_spec,
)
from diagnostics.core.saturation.lookup import (
    CURVES,
    ERROR_BOUND_K,
    AboveCritical,
    BelowRange,
    Curve,
    OutOfRange,
    Quantity,
    SaturationError,
    SaturationTable,
)

__all__ = [
    "CACHE_DIR_ENV",
    "CURVES",
    "ERROR_BOUND_K",
    "TABLE_FORMAT",
    "AboveCritical",
    "BelowRange",
    "Curve",
    "OutOfRange",
    "Quantity",
    "SaturationError",
    "SaturationTable",
    "build_arrays",
    "cache_path",
    "clear_memo",
    "coolprop_pressure_kpa_abs",
    "coolprop_temp_c",
    "default_cache_dir",
    "table",
    "table_version",
]

logger = logging.getLogger(__name__)

CACHE_DIR_ENV = "RIMEWATCH_CACHE_DIR"


def default_cache_dir() -> Path:
    """$RIMEWATCH_CACHE_DIR, else ~/.cache/rimewatch (var/cache where there is no home)."""
    if env := os.environ.get(CACHE_DIR_ENV):
        return Path(env)
    try:
        return Path.home() / ".cache" / "rimewatch"
    except RuntimeError:
        return Path("var") / "cache"


def table_version(refrigerant: Refrigerant) -> str:
    """What a table's content depends on, as one name: the refrigerant, the CoolProp version,
    ``TABLE_FORMAT`` and a digest of how the refrigerant is modelled. Two tables with the
    same version hold the same nodes (the disk cache and the phones' copies key on it)."""
    spec = table_spec(refrigerant)
    digest = hashlib.sha256(json.dumps(spec, sort_keys=True).encode()).hexdigest()[:12]
    slug = "".join(ch for ch in refrigerant.designation if ch.isalnum() or ch == "-")
    return f"{slug}.coolprop-{CoolProp.__version__}.format-{TABLE_FORMAT}.{digest}"


def cache_path(refrigerant: Refrigerant, cache_dir: str | os.PathLike[str] | None = None) -> Path:
    """Where the table of ``refrigerant`` is kept on disk."""
    name = f"{table_version(refrigerant)}.npz"
    return Path(cache_dir if cache_dir is not None else default_cache_dir()) / "saturation" / name


def _read(path: Path, refrigerant: Refrigerant) -> dict[str, Any] | None:
    try:
        with np.load(path, allow_pickle=False) as npz:
            arrays = {key: npz[key] for key in npz.files}
        meta = json.loads(str(arrays["meta"]))
    except FileNotFoundError:
        return None
    except (OSError, ValueError, KeyError, zipfile.BadZipFile) as exc:
        logger.warning("ignoring unreadable saturation table %s: %s", path, exc)
        return None
    if any(meta.get(key) != value for key, value in table_spec(refrigerant).items()):
        return None
    return arrays


def _write(path: Path, arrays: dict[str, Any]) -> None:
    """Write beside the final name, then rename: readers see the old file or the whole new one."""
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=path.name + ".", suffix=".tmp")
        try:
            with os.fdopen(fd, "wb") as f:
                np.savez(f, **arrays)
            os.replace(tmp, path)
        except BaseException:
            Path(tmp).unlink(missing_ok=True)
            raise
    except OSError as exc:
        logger.warning("could not cache the saturation table at %s: %s", path, exc)


_memo: dict[tuple[str, str], SaturationTable] = {}
#: The same tables by the arguments they were asked with (and the cache directory setting).
_asked: dict[tuple[Any, ...], SaturationTable] = {}
_memo_lock = threading.Lock()


def table(designation: str, cache_dir: str | os.PathLike[str] | None = None) -> SaturationTable:
    """The saturation table of a refrigerant (any common spelling: 'R404A', 'r-404a').

    Kept in memory per process, and on disk under ``cache_dir`` (default: see
    ``default_cache_dir``); built from CoolProp on first use. Raises
    ``refrigerants.UnknownRefrigerant`` for a designation the catalogue does not hold.
    """
    asked = (designation, cache_dir, os.environ.get(CACHE_DIR_ENV))
    found = _asked.get(asked)  # no hashing of the spec on every call
    if found is not None:
        return found
    refrigerant = refrigerants.get(designation)
    path = cache_path(refrigerant, cache_dir)
    key = (refrigerant.designation, str(path))
    with _memo_lock:
        if key not in _memo:
            arrays = _read(path, refrigerant)
            if arrays is None:
                arrays = build_arrays(refrigerant)
                _write(path, arrays)
            _memo[key] = SaturationTable(refrigerant, arrays)
        _asked[asked] = _memo[key]
        return _memo[key]


def clear_memo() -> None:
    """Forget the tables held in memory (the disk cache stays)."""
    with _memo_lock:
        _memo.clear()
        _asked.clear()
