"""The neutral truss exchange format (``FORMAT.md``, version 1): reader and writer.

Reading goes in three stages, each collecting *every* problem it finds:

1. JSON (:mod:`~audit.exchange.jsonread`): UTF-8 (a byte-order mark is
   accepted), no duplicate keys, no ``NaN``/``Infinity``, every number finite
   as a 64-bit float, nesting no deeper than :data:`MAX_DEPTH`.
2. Shape (:mod:`~audit.exchange.shape`, :mod:`~audit.exchange.bulk`): the JSON
   Schemas in ``audit/schema/`` (JSON Schema 2020-12), with messages in plain
   words and JSON paths such as ``members[3].end``.
3. Meaning (:mod:`~audit.exchange.build`, :mod:`~audit.exchange.supports`,
   :mod:`~audit.exchange.cases`, :mod:`~audit.exchange.reported`): ids unique
   and references known, lengths non-zero, E and A positive, supports and
   their displacements consistent, and so on.

All problems go into one :class:`~audit.errors.InputError`, in document order
(:mod:`~audit.exchange.problems`).  An unknown key does not stop the meaning
stage (the rest is still well formed); any other shape problem does.

Large arrays and maps (nodes, members, loads, results, stiffness entries) are
not handed to the schema validator item by item: a bulk check per key proves
them valid in a few passes, and only items it cannot vouch for go through the
schema, for exact messages.  A 10^6-member model therefore reads in seconds.

Limits, so that a hostile or broken file fails cleanly instead of exhausting
memory or the stack:

* :data:`MAX_BYTES` = 512 MiB: the largest input accepted;
* :data:`MAX_DEPTH` = 64: the deepest nesting of arrays and objects
  (the format itself needs 6; the rest is room for ``x-`` data);
* :data:`MAX_ITEMS` = 5,000,000: the most nodes, and the most members, in a model;
* :data:`MAX_PROBLEMS` = 10,000: problems listed in one error (a last line
  counts the rest).

The limits are defined here and only here; every module of the package reads
them from this module at call time, so changing ``audit.exchange.MAX_BYTES``
(a test's monkeypatch, say) takes effect everywhere.

Every number keeps its decimal text as written (see
:mod:`~audit.exchange.jsonread`).  In maps keyed by a name or id
(``materials``, ``sections``, ``factors``, ``cases``, ``displacements``,
``axial_forces``, ``reactions``) every key is a name, including one that
starts with ``x-``.

Conventions beyond ``FORMAT.md`` (all compatible): several ``loads``,
``temperature_changes`` or ``length_errors`` entries for one node or member
add up; a support displacement given twice for one restraint is an error; a
spring's stiffness may be zero but not negative; ids may not be empty strings;
``version``, ``dimensions``, ids and stiffness indices must be written as
integers (``2``, not ``2.0``).

Writing (:mod:`~audit.exchange.write`, :mod:`~audit.exchange.numtext`):
:func:`dump_model` from the kept decimal texts, :func:`dump_results` from
values, as shortest round-trip floats or N significant digits.
"""

from __future__ import annotations

import contextlib
import gc
from collections.abc import Iterator

# names imported as ``x as x`` are re-exported: other modules and tests use them as ``audit.exchange.<name>``
from ..fileio import PathLike, read_input_bytes
from ..model import Model, Results
from .build import _build_model
from .bulk import _bulk_components as _bulk_components
from .bulk import _bulk_dofs as _bulk_dofs
from .bulk import _bulk_entries as _bulk_entries
from .bulk import _bulk_length_error as _bulk_length_error
from .bulk import _bulk_load as _bulk_load
from .bulk import _bulk_member as _bulk_member
from .bulk import _bulk_node as _bulk_node
from .bulk import _bulk_support_displacement as _bulk_support_displacement
from .bulk import _bulk_supports as _bulk_supports
from .bulk import _bulk_temperature as _bulk_temperature
from .bulk import _Columns
from .fastread import ScanRefusedError
from .jsonread import _read_json
from .numtext import _number as _number
from .numtext import _round_ratio as _round_ratio
from .problems import _Problems
from .reported import _frame_of, _results
from .shape import _check_document, schema
from .shape import _validator as _validator
from .values import _quanta as _quanta
from .values import _quantum_text as _quantum_text
from .version import FORMAT_VERSION as FORMAT_VERSION
from .version import MODEL_FORMAT as MODEL_FORMAT
from .version import RESULTS_FORMAT as RESULTS_FORMAT
from .write import dump_model, dump_results

__all__ = [
    "MAX_BYTES",
    "MAX_DEPTH",
    "MAX_ITEMS",
    "MAX_PROBLEMS",
    "dump_model",
    "dump_results",
    "load_model",
    "load_results",
    "parse_model",
    "parse_results",
    "schema",
]

#: The limits.  Every module of the package reads them from here at call time (``from .. import exchange``),
#: so a change to ``audit.exchange.MAX_BYTES`` (a test's monkeypatch, say) takes effect everywhere.
MAX_BYTES = 512 * 1024 * 1024
MAX_DEPTH = 64
MAX_ITEMS = 5_000_000
MAX_PROBLEMS = 10_000


@contextlib.contextmanager
def _no_cycle_collection() -> Iterator[None]:
    """Pause Python's cycle collector while a large document is read.

    Reading creates millions of small containers and no reference cycles; the
    collector would otherwise rescan the growing document again and again.
    It is switched back on (if it was on) however the block ends.
    """
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            gc.enable()


def parse_model(data: bytes | str, name: str = "<model>") -> Model:
    """Read a model document (``FORMAT.md``) from its bytes or text.

    Raises
    ------
    InputError
        listing every problem found, in document order.
    """
    with _no_cycle_collection():
        return _parse_model(data, name)


def _parse_model(data: bytes | str, name: str, scan: bool = True) -> Model:
    # a large results map is first read from its bytes (fastread.py); anything it cannot vouch for, and every
    # problem, makes the reader start again from the tree, which finds and words every problem
    parsed = _read_json(data, name, "model" if scan else None)
    probs = _Problems()
    cols = _Columns()
    try:
        _check_document(parsed, "model", probs, cols)
        model = None if probs.blocking else _build_model(parsed.doc, probs, cols)
    except ScanRefusedError:
        return _parse_model(data, name, scan=False)
    if parsed.scanned and probs:
        return _parse_model(data, name, scan=False)
    if model is None or probs:
        raise probs.error(parsed.doc, name)
    return model


def load_model(path: PathLike) -> Model:
    """Read a model file; see :func:`parse_model`."""
    name = str(path)
    return parse_model(read_input_bytes(path, MAX_BYTES), name)


def parse_results(data: bytes | str, model: Model, name: str = "<results>") -> Results:
    """Read a results document for ``model``: values in model units, axial forces tension positive."""
    with _no_cycle_collection():
        return _parse_results(data, model, name)


def _parse_results(data: bytes | str, model: Model, name: str, scan: bool = True) -> Results:
    parsed = _read_json(data, name, "results" if scan else None)  # scanned maps: as in _parse_model
    probs = _Problems()
    try:
        _check_document(parsed, "results", probs, _Columns())
        results = None if probs.blocking else _results(parsed.doc, _frame_of(model), (), probs)
    except ScanRefusedError:
        return _parse_results(data, model, name, scan=False)
    if parsed.scanned and probs:
        return _parse_results(data, model, name, scan=False)
    if results is None or probs:
        raise probs.error(parsed.doc, name)
    return results


def load_results(path: PathLike, model: Model) -> Results:
    """Read a results file; see :func:`parse_results`."""
    return parse_results(read_input_bytes(path, MAX_BYTES), model, str(path))
