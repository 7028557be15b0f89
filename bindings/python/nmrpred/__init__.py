"""nmrpred: chemically equivalent atoms, HOSE codes and 1H/13C shifts for chemical structures.

Quick start::

    import nmrpred
    p = nmrpred.predict("CCO ethanol")
    p.elements            # ['C', 'C', 'O', 'H', 'H', 'H', 'H', 'H', 'H']
    p.classes             # int64 array, one chemical equivalence class per atom
    p.hose[0]             # HOSE code of atom 0
    p.shifts[:2]          # 13C shifts of the two carbons, ppm
    p.shifts[3:]          # 1H shifts of the protons, ppm (NaN for O and for 2H)
    p.signals["13C"]      # one dict per carbon signal, downfield first
    p.signals["1H"]       # one dict per proton signal; "count" is the integral
    nmrpred.predict("CCO", solvent="D2O").signals["1H_exchanged"]  # the OH, not seen in D2O
    print(p.to_json())

The module-level :func:`predict` and :func:`predict_all` use the tables built
into the library. For other tables, or your own assigned compounds, make a
:class:`Context`::

    ctx = nmrpred.Context()                 # or Context("path/to/tables")
    ctx.add_reference(open("mine.tsv").read())
    p = ctx.predict("CCO", blind=True)

Atom order: heavy atoms first, in input order, then every hydrogen grouped by
the heavy atom it is bonded to (explicit hydrogens before implicit ones).
Indices are 0-based.

Threads: every function may be called from several threads at once; the work
runs without the GIL. Results are immutable (their arrays are read-only).

Errors: see :mod:`nmrpred._errors`; all derive from :class:`Error`, and
:class:`InputError` / :class:`ArgumentError` also from :class:`ValueError`.
"""

from __future__ import annotations

import json
import os
import threading
from dataclasses import dataclass, field
from typing import Any, Dict, List, Optional, Union

import numpy as np
import numpy.typing as npt

from . import _core
from ._errors import (
    ArgumentError,
    Error,
    InputError,
    InternalError,
    TablesError,
    UnsupportedError,
    error_for_code,
)

__all__ = [
    "__version__",
    "MAX_HOSE_SPHERES",
    "DEFAULT_HOSE_SPHERES",
    "Context",
    "Prediction",
    "RecordError",
    "predict",
    "predict_all",
    "solvents",
    "DEFAULT_SOLVENT",
    "Error",
    "ArgumentError",
    "InputError",
    "UnsupportedError",
    "TablesError",
    "InternalError",
]

#: Version of the compiled library, "MAJOR.MINOR.PATCH".
__version__: str = _core.__version__

#: Largest number of HOSE code spheres accepted by ``spheres``.
MAX_HOSE_SPHERES: int = _core.max_hose_spheres()
#: Default number of HOSE code spheres.
DEFAULT_HOSE_SPHERES: int = _core.default_hose_spheres()
#: Solvent assumed when none is given.
DEFAULT_SOLVENT: str = "CDCl3"

Int64Array = npt.NDArray[np.int64]
Float64Array = npt.NDArray[np.float64]
BoolArray = npt.NDArray[np.bool_]


def _frozen(a: Any) -> Any:
    a.setflags(write=False)
    return a


@dataclass(frozen=True, eq=False)
class Prediction:
    """Everything predicted for one structure. Immutable.

    Per-atom arrays are int64 NumPy arrays (read-only) of length ``atom_count``.

    Attributes:
        record: 0-based position of the record in the input.
        title: SMILES title or MOL name line ("" if none).
        atom_count: atoms including hydrogens.
        heavy_atom_count: atoms that are not hydrogen (they come first).
        atomic_numbers: element of each atom as its atomic number.
        elements: element symbols ("C", "Cl").
        isotopes: mass number, 0 when the input gave none (natural abundance).
        charges: formal charge in units of e.
        attached_to: for a hydrogen, the heavy atom it is bonded to; -1 otherwise.
        classes: chemical equivalence class (stereo-aware: enantiotopic atoms
            share a class, diastereotopic atoms do not), ids 0..class_count-1.
        topological_classes: graph-symmetry class, ids 0..topological_class_count-1.
        class_count, topological_class_count: numbers of classes.
        hose: HOSE code of each atom.
        shifts: float64 array, predicted chemical shift of each atom in ppm
            from TMS: 13C for carbons, 1H for protons (hydrogens other than
            2H and 3H); NaN for other atoms and when ``predict_shifts=False``
            (protons also with ``predict_h1=False``). Equivalent atoms (one
            class) have equal values.
        shift_uncertainties: float64 array, one standard deviation of each
            shift in ppm; NaN where ``shifts`` is NaN.
        shift_methods: how each shift was obtained, in words; None where
            there is no shift.
        shift_references: ids of the reference compounds behind each shift
            (empty list when none, e.g. for values from increment rules).
        exchangeable: bool array, True for protons on O, N or S, whose
            position depends on solvent, concentration and temperature.
        observed: bool array, False for protons the solvent exchanges for
            deuterium (OH, NH, SH in D2O or CD3OD), which give no signal;
            True for every other atom.
        signals: ``{"13C": [...], "1H": [...], "1H_exchanged": [...]}``, one
            list per predicted nucleus (empty dict when shifts were not
            predicted), each by decreasing shift, as in the JSON. Each signal
            is a dict with "shift" (ppm), "atoms" (indices of the equivalent
            atoms), "shift_uncertainty" (ppm) and "shift_method"; 13C signals
            add "attached_h" (protons on each of those carbons: 0 C, 1 CH,
            2 CH2, 3 CH3, as DEPT-style editing tells them apart); 1H signals
            add "count" (the integral in protons), "exchangeable" and
            "observed". "1H" holds what a spectrum in the solvent shows;
            signals of protons exchanged for deuterium are under
            "1H_exchanged" instead, so the counts of "1H" add up to the
            spectrum's integrals.
        solvent: the solvent of the prediction: {"id", "name", "residual_1h"
            (ppm list), "residual_13c" (ppm list), "water_1h" (ppm)}.
        tables_version: names the table set behind the prediction (store it
            with results; equal names mean equal data).
        warnings: remarks from reading and prediction (never errors).
    """

    record: int
    title: str
    atom_count: int
    heavy_atom_count: int
    atomic_numbers: Int64Array = field(repr=False)
    elements: List[str] = field(repr=False)
    isotopes: Int64Array = field(repr=False)
    charges: Int64Array = field(repr=False)
    attached_to: Int64Array = field(repr=False)
    classes: Int64Array = field(repr=False)
    topological_classes: Int64Array = field(repr=False)
    class_count: int
    topological_class_count: int
    hose: List[str] = field(repr=False)
    shifts: Float64Array = field(repr=False)
    shift_uncertainties: Float64Array = field(repr=False)
    shift_methods: List[Optional[str]] = field(repr=False)
    shift_references: List[List[str]] = field(repr=False)
    signals: Dict[str, List[Dict[str, Any]]] = field(repr=False)
    exchangeable: BoolArray = field(repr=False)
    observed: BoolArray = field(repr=False)
    solvent: Dict[str, Any] = field(repr=False)
    tables_version: str
    warnings: List[str]
    _record: _core.Record = field(repr=False)

    @classmethod
    def _from_core(cls, r: _core.Record) -> "Prediction":
        return cls(
            record=r.record,
            title=r.title,
            atom_count=r.atom_count,
            heavy_atom_count=r.heavy_atom_count,
            atomic_numbers=_frozen(r.atomic_numbers()),
            elements=r.elements(),
            isotopes=_frozen(r.isotopes()),
            charges=_frozen(r.charges()),
            attached_to=_frozen(r.attached_to()),
            classes=_frozen(r.classes()),
            topological_classes=_frozen(r.topological_classes()),
            class_count=r.class_count,
            topological_class_count=r.topological_class_count,
            hose=r.hose(),
            shifts=_frozen(r.shifts()),
            shift_uncertainties=_frozen(r.shift_uncertainties()),
            shift_methods=r.shift_methods(),
            shift_references=r.shift_references(),
            signals=r.signals(),
            exchangeable=_frozen(r.exchangeable()),
            observed=_frozen(r.observed()),
            solvent=r.solvent(),
            tables_version=r.tables_version,
            warnings=r.warnings,
            _record=r,
        )

    def to_json(self, indent: Optional[int] = None) -> str:
        """The record as a JSON object, the same text the C interface and the
        ``nmrpred`` program produce. ``indent=None`` prints one line."""
        return self._record.to_json(-1 if indent is None else indent)


@dataclass(frozen=True, eq=False)
class RecordError:
    """A record of a batch that could not be read or predicted.

    Attributes:
        record: 0-based position of the record in the input.
        code: C status code (2 = NMR_ERR_INPUT for unusable structure text).
        message: what went wrong.
        title: title of the record if the reader got that far, else "".
        warnings: remarks gathered before the failure.
    """

    record: int
    code: int
    message: str
    title: str = ""
    warnings: List[str] = field(default_factory=list)
    _record: Optional[_core.Record] = field(default=None, repr=False)

    def exception(self) -> Exception:
        """The exception that :func:`predict` raises for this failure."""
        return error_for_code(self.code, f"record {self.record}: {self.message}")

    def to_json(self, indent: Optional[int] = None) -> str:
        """The record as a JSON object with an "error" member, as the C interface
        and the ``nmrpred`` program produce it."""
        if self._record is None:
            raise InternalError("RecordError made outside the library has no JSON form")
        return self._record.to_json(-1 if indent is None else indent)


def _convert(r: _core.Record) -> Union[Prediction, RecordError]:
    if r.ok:
        return Prediction._from_core(r)
    return RecordError(record=r.record, code=r.status, message=r.error, title=r.title,
                       warnings=r.warnings, _record=r)


def _check_text(text: Any, format: Any) -> None:
    # The extension would also accept bytes; insisting on str keeps the text's
    # encoding the caller's decision.
    if not isinstance(text, str):
        raise TypeError(f"text must be str, not {type(text).__name__}")
    if not isinstance(format, str):
        raise TypeError(f"format must be str, not {type(format).__name__}")


class Context:
    """The tables behind predictions, and predictions made with them.

    ``Context()`` uses the tables built into the library; ``Context(dir)``
    reads a replacement set from a folder laid out like the project's
    ``tables/`` (at least ``SOURCES.md`` and ``reference/*.tsv``). Reading the
    tables takes tens of milliseconds: make a context once and reuse it.

    Threads: a context may be shared by several threads; predictions run
    without the GIL and in parallel. :meth:`add_reference` waits for nothing
    but other additions; predictions already running keep the tables they
    started with.

    Raises:
        TablesError: the folder lacks a required file or a table is malformed
            (the message names the file and line).
        TypeError: tables_dir is not a str or path.
    """

    def __init__(self, tables_dir: Optional[Union[str, "os.PathLike[str]"]] = None) -> None:
        if tables_dir is not None:
            tables_dir = os.fspath(tables_dir)
            if not isinstance(tables_dir, str):
                raise TypeError(f"tables_dir must be str or os.PathLike[str], not {type(tables_dir).__name__}")
        self._core = _core.Context(tables_dir)

    @property
    def tables_version(self) -> str:
        """Names the current table set: "builtin-<hash>" or "dir-<hash>", plus
        "+user-<hash>" per :meth:`add_reference`. Equal names mean equal data."""
        return self._core.tables_version

    def add_reference(self, text: str, name: str = "user") -> None:
        """Adds the user's own assigned compounds; later predictions use them
        before the built-in records and name their ids in ``shift_references``.

        Args:
            text: records in the reference format of the project's
                ``tables/FORMAT.md`` (tab-separated column header line
                ``id smiles solvent c13 h1 source``, then one compound per
                line; the four ``#`` header lines may be left out).
            name: labels the records in messages and in :meth:`reference`
                ("file"), e.g. the file name they came from.

        All or nothing: on an error the tables stay as they were.

        Raises:
            TablesError: bad format, no records, an id already in use, or a
                SMILES that cannot be read (the message names ``name:line``
                or the record).
            InputError: a structure the library cannot use.
            TypeError: text or name is not a str.
        """
        if not isinstance(text, str):
            raise TypeError(f"text must be str, not {type(text).__name__}")
        if not isinstance(name, str):
            raise TypeError(f"name must be str, not {type(name).__name__}")
        self._core.add_reference(text, name)

    def reference(self) -> List[Dict[str, Any]]:
        """The reference compounds of the tables (built-in or from the folder,
        then the user's), as dicts with "id", "smiles", "solvent", "source",
        "file", "user", "c13" and "h1"; the last two are lists of
        ``{"atoms": [...], "ppm": [...]}`` (see ``nmrpred reference``)."""
        return [json.loads(text) for text in self._core.reference_json()]

    def solvents(self) -> List[Dict[str, Any]]:
        """The solvents of the tables (see :func:`nmrpred.solvents`)."""
        return [json.loads(text) for text in self._core.solvents_json()]

    def predict_all(self, text: str, format: str = "auto", spheres: int = DEFAULT_HOSE_SPHERES,
                    blind: bool = False, predict_shifts: bool = True, solvent: str = DEFAULT_SOLVENT,
                    predict_h1: bool = True) -> List[Union[Prediction, RecordError]]:
        """Reads every record of ``text`` and predicts each one.

        Args:
            text: structure text: SMILES (one per line, optional title after
                whitespace), MOL, SDF or InChI (one per line).
            format: "auto" (recognise from the content), "smiles", "mol", "sdf" or "inchi".
            spheres: spheres of the HOSE codes, 1..MAX_HOSE_SPHERES.
            blind: predict shifts as if every reference compound with the
                same constitution as the query were absent (an honest figure
                for compounds the tables hold).
            predict_shifts: False gives classes and HOSE codes only (faster);
                ``shifts`` is then all NaN and ``signals`` empty.
            solvent: solvent of the sample, a name or alias from
                :func:`solvents` (case-insensitive), e.g. "CDCl3", "DMSO-d6",
                "D2O". In D2O and CD3OD protons on O, N and S exchange for
                deuterium and give no signal.
            predict_h1: False predicts 13C only.

        Returns:
            One item per record, in input order: a :class:`Prediction`, or a
            :class:`RecordError` for a record that failed (the batch goes on).
            Empty if the text holds no record.

        Raises:
            ArgumentError: unknown format, spheres out of range, or unknown
                solvent (the message names the known ones).
            TablesError: the tables have no usable solvent list.
            TypeError: text, format or solvent is not a str.
            KeyboardInterrupt: Ctrl-C between records.
        """
        _check_text(text, format)
        if not isinstance(solvent, str):
            raise TypeError(f"solvent must be str, not {type(solvent).__name__}")
        records = self._core.predict_records(text, format, spheres, bool(blind), bool(predict_shifts), solvent,
                                             bool(predict_h1))
        return [_convert(r) for r in records]

    def predict(self, text: str, format: str = "auto", spheres: int = DEFAULT_HOSE_SPHERES,
                blind: bool = False, predict_shifts: bool = True, solvent: str = DEFAULT_SOLVENT,
                predict_h1: bool = True) -> Prediction:
        """Predicts the one structure in ``text``.

        Arguments as for :meth:`predict_all`.

        Raises:
            InputError: the text holds no structure, more than one record, or a
                structure that cannot be read (the message says why).
            ArgumentError: unknown format, spheres out of range, or unknown
                solvent (the message names the known ones).
            TablesError: the tables have no usable solvent list.
            TypeError: text, format or solvent is not a str.
        """
        items = self.predict_all(text, format, spheres, blind, predict_shifts, solvent, predict_h1)
        if not items:
            raise InputError("the text holds no structure (it is empty or only whitespace)")
        if len(items) > 1:
            raise InputError(f"expected one structure, the text holds {len(items)} records; use predict_all()")
        item = items[0]
        if isinstance(item, RecordError):
            raise error_for_code(item.code, item.message)
        return item


# The module-level functions share one context with the built-in tables, made
# on first use: the C++ library keeps no global state, so the one shared
# object lives here.
_builtin_context: Optional[Context] = None
_builtin_context_lock = threading.Lock()


def _builtin() -> Context:
    global _builtin_context
    with _builtin_context_lock:
        if _builtin_context is None:
            _builtin_context = Context()
        return _builtin_context


def predict_all(text: str, format: str = "auto", spheres: int = DEFAULT_HOSE_SPHERES,
                blind: bool = False, predict_shifts: bool = True, solvent: str = DEFAULT_SOLVENT,
                predict_h1: bool = True) -> List[Union[Prediction, RecordError]]:
    """:meth:`Context.predict_all` with the tables built into the library."""
    _check_text(text, format)
    return _builtin().predict_all(text, format, spheres, blind, predict_shifts, solvent, predict_h1)


def predict(text: str, format: str = "auto", spheres: int = DEFAULT_HOSE_SPHERES,
            blind: bool = False, predict_shifts: bool = True, solvent: str = DEFAULT_SOLVENT,
            predict_h1: bool = True) -> Prediction:
    """:meth:`Context.predict` with the tables built into the library."""
    _check_text(text, format)
    return _builtin().predict(text, format, spheres, blind, predict_shifts, solvent, predict_h1)


def solvents() -> List[Dict[str, Any]]:
    """The NMR solvents the built-in tables know, in table order, as dicts
    with "id", "name" (usual spelling), "residual_1h" and "residual_13c" (ppm
    of the residual signals of the deuterated solvent), "water_1h" (ppm of
    dissolved water), "aliases" (lower-case names accepted as ``solvent``),
    "exchanges_labile_protons" (True for D2O and CD3OD), "source" (key of
    tables/SOURCES.md) and "residual_1h_detail" / "residual_13c_detail" (lists
    of {"shift", "multiplicity", "coupling_hz"}), as ``nmrpred solvents``
    prints them."""
    return _builtin().solvents()
