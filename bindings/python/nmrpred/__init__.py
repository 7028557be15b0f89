"""nmrpred: chemically equivalent atoms and HOSE codes for chemical structures.

Quick start::

    import nmrpred
    p = nmrpred.predict("CCO ethanol")
    p.elements            # ['C', 'C', 'O', 'H', 'H', 'H', 'H', 'H', 'H']
    p.classes             # int64 array, one chemical equivalence class per atom
    p.hose[0]             # HOSE code of atom 0
    print(p.to_json())

Atom order: heavy atoms first, in input order, then every hydrogen grouped by
the heavy atom it is bonded to (explicit hydrogens before implicit ones).
Indices are 0-based.

Threads: every function may be called from several threads at once; the work
runs without the GIL. Results are immutable (their arrays are read-only).

Errors: see :mod:`nmrpred._errors`; all derive from :class:`Error`, and
:class:`InputError` / :class:`ArgumentError` also from :class:`ValueError`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import List, Optional, Union

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
    "Prediction",
    "RecordError",
    "predict",
    "predict_all",
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

Int64Array = npt.NDArray[np.int64]


def _frozen(a: Int64Array) -> Int64Array:
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


def predict_all(text: str, format: str = "auto", spheres: int = DEFAULT_HOSE_SPHERES
                ) -> List[Union[Prediction, RecordError]]:
    """Reads every record of ``text`` and predicts each one.

    Args:
        text: structure text: SMILES (one per line, optional title after
            whitespace), MOL, SDF or InChI (one per line).
        format: "auto" (recognise from the content), "smiles", "mol", "sdf" or "inchi".
        spheres: spheres of the HOSE codes, 1..MAX_HOSE_SPHERES.

    Returns:
        One item per record, in input order: a :class:`Prediction`, or a
        :class:`RecordError` for a record that failed (the batch goes on). Empty
        if the text holds no record.

    Raises:
        ArgumentError: unknown format or spheres out of range.
        TypeError: text is not a str.
        KeyboardInterrupt: Ctrl-C between records.
    """
    # The extension would also accept bytes; insisting on str keeps the text's
    # encoding the caller's decision.
    if not isinstance(text, str):
        raise TypeError(f"text must be str, not {type(text).__name__}")
    if not isinstance(format, str):
        raise TypeError(f"format must be str, not {type(format).__name__}")
    return [_convert(r) for r in _core.predict_records(text, format, spheres)]


def predict(text: str, format: str = "auto", spheres: int = DEFAULT_HOSE_SPHERES) -> Prediction:
    """Predicts the one structure in ``text``.

    Arguments as for :func:`predict_all`.

    Raises:
        InputError: the text holds no structure, more than one record, or a
            structure that cannot be read (the message says why).
        ArgumentError: unknown format or spheres out of range.
        TypeError: text is not a str.
    """
    items = predict_all(text, format, spheres)
    if not items:
        raise InputError("the text holds no structure (it is empty or only whitespace)")
    if len(items) > 1:
        raise InputError(f"expected one structure, the text holds {len(items)} records; use predict_all()")
    item = items[0]
    if isinstance(item, RecordError):
        raise error_for_code(item.code, item.message)
    return item
