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
from typing import Any, Dict, List, Optional, Sequence, Tuple, Union

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
    "Spectrum",
    "MatchRanking",
    "simulate",
    "parse_measured",
    "format_measured",
    "match",
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
        couplings: estimated J couplings (``predict_couplings=True``), as
            in the JSON: one dict per atom pair with "atoms" ([a, b], a <
            b), "bonds" (2 for 2J, ...), "j_hz" (signed, Hz),
            "uncertainty_hz", "rule" (id in tables/couplings/) and "source"
            (key of tables/SOURCES.md). Signals then also carry
            "multiplicity" ("s", "d", "dd", ...; "" for an unsplit 13C
            signal) and "j_hz" (Hz, largest first), and 1H signals "lines"
            (dicts of "ppm", "hz", "intensity") simulated at ``field_mhz``.
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
    couplings: List[Dict[str, Any]] = field(repr=False)
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
            couplings=r.couplings(),
            _record=r,
        )

    def spectrum(self, nucleus: str = "1H", mhz: float = 400.0, line_width_hz: float = 1.0) -> "Spectrum":
        """Simulates the 1H or 13C spectrum of this prediction: its shifts and
        (1H) its estimated couplings, strongly coupled protons solved exactly.
        13C spectra are proton-decoupled. Multiplet "atoms" are atom indices.

        Args:
            nucleus: "1H" or "13C".
            mhz: spectrometer field as the 1H frequency, MHz (40..1200).
            line_width_hz: full width at half height of a line, Hz (0 < w <= 100).

        Raises:
            ArgumentError: unknown nucleus, a nucleus that was not predicted,
                or a field or width out of range.
        """
        if not isinstance(nucleus, str):
            raise TypeError(f"nucleus must be str, not {type(nucleus).__name__}")
        return Spectrum(_core.simulate_record(self._record, nucleus, float(mhz), float(line_width_hz)))

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
                    predict_h1: bool = True, predict_couplings: bool = True, field_mhz: float = 400.0,
                    line_width_hz: float = 1.0) -> List[Union[Prediction, RecordError]]:
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
            predict_couplings: estimate J couplings and give 1H signals a
                multiplicity simulated at ``field_mhz`` (False: faster, no
                multiplicities).
            field_mhz: spectrometer field as the 1H frequency, MHz (40..1200).
            line_width_hz: line width, Hz (0 < w <= 100): narrower
                splittings are not resolved in multiplicities.

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
        records = self._predict_records(text, format, spheres, blind, predict_shifts, solvent, predict_h1,
                                        predict_couplings, field_mhz, line_width_hz)
        return [_convert(r) for r in records]

    def _predict_records(self, text: str, format: str, spheres: int, blind: bool, predict_shifts: bool,
                         solvent: str, predict_h1: bool, predict_couplings: bool, field_mhz: float,
                         line_width_hz: float) -> List[_core.Record]:
        return self._core.predict_records(text, format, spheres, bool(blind), bool(predict_shifts), solvent,
                                          bool(predict_h1), bool(predict_couplings), float(field_mhz),
                                          float(line_width_hz))

    def predict(self, text: str, format: str = "auto", spheres: int = DEFAULT_HOSE_SPHERES,
                blind: bool = False, predict_shifts: bool = True, solvent: str = DEFAULT_SOLVENT,
                predict_h1: bool = True, predict_couplings: bool = True, field_mhz: float = 400.0,
                line_width_hz: float = 1.0) -> Prediction:
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
        items = self.predict_all(text, format, spheres, blind, predict_shifts, solvent, predict_h1,
                                 predict_couplings, field_mhz, line_width_hz)
        if not items:
            raise InputError("the text holds no structure (it is empty or only whitespace)")
        if len(items) > 1:
            raise InputError(f"expected one structure, the text holds {len(items)} records; use predict_all()")
        item = items[0]
        if isinstance(item, RecordError):
            raise error_for_code(item.code, item.message)
        return item

    def spectrum(self, text: str, nucleus: str = "1H", mhz: float = 400.0, line_width_hz: float = 1.0,
                 format: str = "auto", solvent: str = DEFAULT_SOLVENT, blind: bool = False) -> "Spectrum":
        """Predicts the one structure in ``text`` (with couplings, at ``mhz``)
        and simulates its ``nucleus`` spectrum: :meth:`predict` then
        :meth:`Prediction.spectrum`. Raises what those raise."""
        p = self.predict(text, format=format, blind=blind, solvent=solvent, predict_couplings=True,
                         field_mhz=mhz, line_width_hz=line_width_hz)
        return p.spectrum(nucleus, mhz, line_width_hz)

    def match(self, candidates: Union[str, Sequence[str]], measured: Union[str, Sequence[str]],
              format: str = "auto", solvent: Optional[str] = None, blind: bool = False,
              spheres: int = DEFAULT_HOSE_SPHERES, predict_couplings: bool = True,
              field_mhz: float = 400.0) -> "MatchRanking":
        """Predicts every candidate structure and ranks them against measured
        peak lists (1H and/or 13C, at most one spectrum per nucleus).

        Args:
            candidates: structure text (several SMILES lines, an SDF, ...), or
                a sequence of SMILES strings (one candidate each).
            measured: one peak-list text or a sequence of them, each in the
                trade's prose style, CSV or JSON (see :func:`parse_measured`).
            format: format of ``candidates`` when it is one text.
            solvent: the sample's solvent; None takes the first solvent the
                measured data name that the tables know, else CDCl3.
            blind, spheres, predict_couplings, field_mhz: as for :meth:`predict_all`.

        Returns:
            A :class:`MatchRanking`. A candidate that cannot be read keeps
            its place in ``candidates`` with an "error" and is not ranked.

        Raises:
            InputError: unusable measured data (the message names the text,
                line and column), or no candidate at all.
            ArgumentError: two spectra of one nucleus, a nucleus not
                predicted, unknown format or solvent.
            TypeError: an argument of the wrong type.
        """
        if isinstance(candidates, str):
            text = candidates
        else:
            items = list(candidates)
            for c in items:
                if not isinstance(c, str):
                    raise TypeError(f"candidates must be str or a sequence of str, not holding {type(c).__name__}")
                if "\n" in c or not c.strip():
                    raise InputError(f"candidate {c!r} is empty or spans several lines; give one SMILES each")
            text = "\n".join(items)
            format = "smiles"
        _check_text(text, format)
        texts = [measured] if isinstance(measured, str) else list(measured)
        for m in texts:
            if not isinstance(m, str):
                raise TypeError(f"measured must be str or a sequence of str, not holding {type(m).__name__}")
        if not texts:
            raise ArgumentError("no measured peak list given")
        if solvent is None:
            solvent = self._solvent_of(_core.measured_solvents(texts))
        elif not isinstance(solvent, str):
            raise TypeError(f"solvent must be str or None, not {type(solvent).__name__}")
        records = self._predict_records(text, format, spheres, blind, True, solvent, True, predict_couplings,
                                        field_mhz, 1.0)
        if not records:
            raise InputError("the candidates text holds no structure (it is empty or only whitespace)")
        return MatchRanking._from_json(self._core.match(records, texts))

    def _solvent_of(self, names: List[str]) -> str:
        """The first of ``names`` the tables know, by name, id or alias; else the default."""
        known = {}
        for s in self.solvents():
            for key in [s["name"], s["id"], *s.get("aliases", [])]:
                known[str(key).lower()] = s["name"]
        for n in names:
            if n.lower() in known:
                return known[n.lower()]
        return DEFAULT_SOLVENT


class Spectrum:
    """A simulated spectrum: line list, multiplets, sampling, JCAMP-DX and SVG.

    Made by :func:`simulate`, :meth:`Prediction.spectrum` and
    :meth:`Context.spectrum`. Immutable; safe to share between threads.

    Attributes:
        observe: observed isotope ("1H", "13C", "2H", "19F", "31P").
        field_mhz: 1H frequency of the magnet, MHz.
        observe_mhz: frequency of the observed isotope, MHz (Hz = ppm * this).
        lines: NumPy structured array (read-only) with float64 fields "ppm",
            "hz" and "intensity", by increasing ppm; intensities add up to
            the number of observed nuclei.
        multiplets: one dict per signal, downfield first: "ppm" (centre),
            "ppm_low", "ppm_high", "label" ("s", "d", "dd", "m", ...),
            "j_hz" (resolved couplings, largest first), "integral" (nuclei),
            "atoms" (atom indices, or spin indices for spin systems) and
            "lines" ({"ppm", "hz", "intensity"} arrays).
        warnings: remarks of the simulation.
    """

    def __init__(self, core: "_core.Spectrum") -> None:
        self._core = core
        self.observe: str = core.observe
        self.field_mhz: float = core.field_mhz
        self.observe_mhz: float = core.observe_mhz
        self.warnings: List[str] = core.warnings
        raw = core.lines()
        lines = np.zeros(len(raw["ppm"]), dtype=[("ppm", "f8"), ("hz", "f8"), ("intensity", "f8")])
        for key in ("ppm", "hz", "intensity"):
            lines[key] = raw[key]
        self.lines = _frozen(lines)
        self.multiplets: List[Dict[str, Any]] = core.multiplets()

    def __repr__(self) -> str:
        return (f"Spectrum(observe={self.observe!r}, field_mhz={self.field_mhz}, lines={len(self.lines)}, "
                f"multiplets={len(self.multiplets)})")

    def _sampling(self, points: Optional[int], ppm_range: Optional[Tuple[float, float]],
                  shape: str, line_width_hz: Optional[float]) -> Tuple[Any, ...]:
        if ppm_range is None:
            low = high = None
        else:
            low, high = (float(v) for v in ppm_range)
        if points is not None and (not isinstance(points, (int, np.integer)) or points < 16 or points > 4194304):
            raise ArgumentError(f"points must be a whole number from 16 to 4194304, got {points!r}")
        if not isinstance(shape, str):
            raise TypeError(f"shape must be str, not {type(shape).__name__}")
        return (None if points is None else int(points), low, high, shape,
                None if line_width_hz is None else float(line_width_hz))

    def sample(self, points: Optional[int] = None, ppm_range: Optional[Tuple[float, float]] = None,
               shape: str = "lorentzian", line_width_hz: Optional[float] = None
               ) -> Tuple[Float64Array, Float64Array]:
        """The spectrum on an equally spaced axis.

        Args:
            points: samples, both ends included (16..4194304); None: enough
                for at least 4 per line width.
            ppm_range: (low, high) in ppm; None: the nucleus's usual range
                (1H -0.5..12, 13C -5..225; other isotopes: the lines' span).
            shape: "lorentzian" or "gaussian".
            line_width_hz: full width at half height, Hz; None: the
                simulation's width.

        Returns:
            (ppm, intensity): float64 arrays, ppm ascending; intensity in
            units per ppm, so ``intensity.sum() * step`` approximates the
            number of nuclei whose lines fall inside the axis.

        Raises:
            ArgumentError: points, range, shape or width out of range.
        """
        return self._core.sample(*self._sampling(points, ppm_range, shape, line_width_hz))

    def to_jcamp(self, title: str = "", points: Optional[int] = None,
                 ppm_range: Optional[Tuple[float, float]] = None, shape: str = "lorentzian",
                 line_width_hz: Optional[float] = None) -> str:
        """The sampled spectrum as a JCAMP-DX 5.01 text (NMR SPECTRUM, x in
        Hz from the reference, high ppm first). Sampling as :meth:`sample`.

        Raises:
            UnsupportedError: the observed isotope is not 1H or 13C.
            ArgumentError: a bad sampling argument or title (one line of
                printable ASCII).
        """
        return self._core.to_jcamp(*self._sampling(points, ppm_range, shape, line_width_hz), title)

    def to_svg(self, title: str = "", points: Optional[int] = None,
               ppm_range: Optional[Tuple[float, float]] = None, shape: str = "lorentzian",
               line_width_hz: Optional[float] = None) -> str:
        """The sampled spectrum drawn as a self-contained SVG picture, each
        multiplet labelled. Sampling as :meth:`sample`. Raises as :meth:`to_jcamp`."""
        return self._core.to_svg(*self._sampling(points, ppm_range, shape, line_width_hz), title)

    def to_json(self, indent: Optional[int] = None) -> str:
        """Lines and multiplets as JSON, the layout of nmr_spectrum_to_json()."""
        def plain(lines: Any) -> List[Dict[str, float]]:
            return [{"ppm": float(p), "hz": float(h), "intensity": float(i)}
                    for p, h, i in zip(lines["ppm"], lines["hz"], lines["intensity"])]
        doc = {
            "observe": self.observe, "mhz": self.field_mhz, "observe_mhz": self.observe_mhz,
            "lines": plain(self.lines),
            "multiplets": [{**{k: v for k, v in m.items() if k != "lines"}, "lines": plain(m["lines"])}
                           for m in self.multiplets],
            "warnings": self.warnings,
        }
        return json.dumps(doc, indent=indent)


@dataclass(frozen=True)
class MatchRanking:
    """Candidate structures ranked against measured peak lists.

    Attributes:
        ranking: one dict per ranked candidate, best (lowest score) first:
            "candidate" (input index), "title", "score" (0 is perfect
            agreement), "verdict" ("consistent", "doubtful", "inconsistent")
            and "probability".
        margin: score of the second best minus that of the best; None with
            fewer than two ranked candidates.
        candidates: per candidate, in input order, the full match: "score",
            "verdict", "reasons", "worst", "warnings", "summary" and
            "spectra" (with each peak's "assignment" and each signal's
            residual), or "error" {"code", "name", "message"} for a
            candidate that could not be read.
    """

    ranking: List[Dict[str, Any]]
    margin: Optional[float]
    candidates: List[Dict[str, Any]]
    _json: str = field(repr=False)

    @classmethod
    def _from_json(cls, text: str) -> "MatchRanking":
        doc = json.loads(text)
        return cls(ranking=doc["ranking"], margin=doc["margin"], candidates=doc["candidates"], _json=text)

    @property
    def best(self) -> Optional[Dict[str, Any]]:
        """The full match of the best candidate, or None when none was ranked."""
        return self.candidates[self.ranking[0]["candidate"]] if self.ranking else None

    def to_json(self) -> str:
        """The ranking as JSON, the layout of nmr_match_to_json()."""
        return self._json


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
                predict_h1: bool = True, predict_couplings: bool = True, field_mhz: float = 400.0,
                line_width_hz: float = 1.0) -> List[Union[Prediction, RecordError]]:
    """:meth:`Context.predict_all` with the tables built into the library."""
    _check_text(text, format)
    return _builtin().predict_all(text, format, spheres, blind, predict_shifts, solvent, predict_h1,
                                  predict_couplings, field_mhz, line_width_hz)


def predict(text: str, format: str = "auto", spheres: int = DEFAULT_HOSE_SPHERES,
            blind: bool = False, predict_shifts: bool = True, solvent: str = DEFAULT_SOLVENT,
            predict_h1: bool = True, predict_couplings: bool = True, field_mhz: float = 400.0,
            line_width_hz: float = 1.0) -> Prediction:
    """:meth:`Context.predict` with the tables built into the library."""
    _check_text(text, format)
    return _builtin().predict(text, format, spheres, blind, predict_shifts, solvent, predict_h1,
                              predict_couplings, field_mhz, line_width_hz)


def simulate(spin_system: Union[str, Dict[str, Any]], mhz: Optional[float] = None,
             observe: Optional[str] = None, line_width_hz: Optional[float] = None) -> Spectrum:
    """Simulates a spin system: exact quantum mechanics for strongly coupled
    spins, first-order splitting between weakly coupled ones.

    Args:
        spin_system: a dict or its JSON text, as ``nmrpred simulate`` reads it:
            ``{"mhz": 400, "spins": [{"shift": 2.1, "nucleus": "1H"}, ...],
            "couplings": [[i, j, J_Hz], ...]}``; per spin optional "class"
            (equivalence class) and "exchangeable"; a spin may be a bare
            number (a 1H shift). Optional "observe", "line_width_hz",
            "weak_coupling_ratio", "max_block_size", "merge_tolerance_hz",
            "equivalent_shift_tolerance_ppm".
        mhz, observe, line_width_hz: when given, replace the keys of the
            same meaning; otherwise the system's own, else 400 MHz, "1H", 1 Hz.

    Raises:
        ArgumentError: text that is not JSON, an unknown key, a bad value or
            a spin system the library rejects (the message names the key,
            spin or coupling).
        TypeError: spin_system is neither str nor dict.
    """
    if isinstance(spin_system, dict):
        doc = dict(spin_system)
    elif isinstance(spin_system, str):
        if mhz is None and observe is None and line_width_hz is None:
            return Spectrum(_core.simulate_json(spin_system, 400.0, 1.0))
        try:
            doc = json.loads(spin_system)
        except ValueError as e:
            raise ArgumentError(f"spin system JSON: not valid JSON: {e}") from None
        if not isinstance(doc, dict):
            raise ArgumentError("spin system JSON: must be a JSON object with \"spins\" and \"couplings\"")
    else:
        raise TypeError(f"spin_system must be a dict or JSON str, not {type(spin_system).__name__}")
    if mhz is not None:
        doc["mhz"] = mhz
    if observe is not None:
        doc["observe"] = observe
    if line_width_hz is not None:
        doc["line_width_hz"] = line_width_hz
    try:
        text = json.dumps(doc, allow_nan=False)
    except (TypeError, ValueError) as e:
        raise ArgumentError(f"spin system JSON: cannot be written as JSON: {e}") from None
    return Spectrum(_core.simulate_json(text, 400.0, 1.0))


def parse_measured(text: str, format: str = "auto", default_nucleus: Optional[str] = None
                   ) -> List[Dict[str, Any]]:
    """Reads measured peak lists as chemists write them ("1H NMR (400 MHz,
    CDCl3) δ 7.31 (d, J = 8.5 Hz, 2H), ..."), or a CSV or JSON table
    (docs/measured.md).

    Args:
        text: the peak list(s); one text may hold a 1H and a 13C list.
        format: "auto", "text", "csv" or "json".
        default_nucleus: "1H" or "13C" for a list that does not say.

    Returns:
        One dict per spectrum: "nucleus" ("1H"/"13C"), "mhz" (or None),
        "solvent" (as written, or None) and "peaks", each peak a dict with
        "shift" (ppm; the midpoint of a range), "range" ((low, high) or
        None), "integral", "multiplicity" (normalised letters), "j_hz",
        "j_partner", "attached_h", "assignment" (None when not given),
        "text" (as written) and "position" (byte offset).

    Raises:
        InputError: text that is not a peak list (the message names the
            line, column and what was found).
        ArgumentError: unknown format or nucleus.
    """
    if not isinstance(text, str):
        raise TypeError(f"text must be str, not {type(text).__name__}")
    return _core.parse_measured(text, format, default_nucleus)


def format_measured(spectrum: Union[str, Dict[str, Any], Sequence[Dict[str, Any]]]) -> str:
    """Writes peak lists in the trade's prose style, normalised: 2 decimals
    for 1H shifts, 1 for 13C, multiplicities as letters, one spectrum per
    line. ``spectrum`` is peak-list text (any format :func:`parse_measured`
    reads), or one or more dicts as :func:`parse_measured` returns them.

    Raises:
        InputError: unusable text or values.
        TypeError: an argument of another type.
    """
    if isinstance(spectrum, str):
        return _core.format_measured(spectrum)
    items = [spectrum] if isinstance(spectrum, dict) else list(spectrum)
    docs = []
    for s in items:
        if not isinstance(s, dict):
            raise TypeError(f"spectrum must be str, dict or a sequence of dicts, not holding {type(s).__name__}")
        doc = {k: v for k, v in s.items() if k != "peaks"}
        peaks = []
        for p in s.get("peaks", []):
            q = {k: v for k, v in p.items() if k not in ("text", "position")}
            if q.get("range") is not None:
                q.pop("shift", None)
                q["range"] = list(q["range"])
            else:
                q.pop("range", None)
            peaks.append(q)
        doc["peaks"] = peaks
        docs.append(doc)
    return _core.format_measured(json.dumps(docs))


def match(candidates: Union[str, Sequence[str]], measured: Union[str, Sequence[str]], format: str = "auto",
          solvent: Optional[str] = None, blind: bool = False) -> MatchRanking:
    """:meth:`Context.match` with the tables built into the library."""
    return _builtin().match(candidates, measured, format=format, solvent=solvent, blind=blind)


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
