"""Validator for the reference shift records in tables/reference/*.tsv.

Run with Debian's interpreter: ``/usr/bin/python3 -m pytest tests/python``.

The file format is described in tables/FORMAT.md, section "Reference shift
records". Every check below names its basis in its docstring: RDKit (the
structure perception of python3-rdkit) or common practice (facts of the NMR
trade with no single source). The shift values themselves are not checked
against anything here; each row names the handbook it was taken from.
"""

import re
from collections import defaultdict
from pathlib import Path

import pytest
from rdkit import Chem, RDLogger

RDLogger.DisableLog("rdApp.*")

REPO_ROOT = Path(__file__).resolve().parents[2]
REFERENCE_DIR = REPO_ROOT / "tables" / "reference"
SOURCES_MD = REPO_ROOT / "tables" / "SOURCES.md"

HEADER_COMMENTS = (
    ("# table:", "reference-shifts"),
    ("# version:", None),  # any positive integer
    ("# units:", "ppm relative to TMS"),
    ("# sources:", None),  # free text pointing at SOURCES.md
)
COLUMNS = ["id", "smiles", "solvent", "c13", "h1", "source"]
SOLVENTS = {"CDCl3", "DMSO-d6", "D2O", "CD3OD", "acetone-d6", "C6D6", "CD3CN"}
ID_RE = re.compile(r"^[a-z0-9]+(-[a-z0-9]+)*$")
NUM = r"-?\d+(?:\.\d+)?"
VALUE_RE = re.compile(rf"^{NUM}$")
PAIR_VALUE_RE = re.compile(rf"^({NUM})\|({NUM})$")
INDEX_LIST_RE = re.compile(r"^\d+(?:,\d+)*$")
INDEX_PAIR_RE = re.compile(r"^(\d+)\|(\d+)$")
SOURCE_RE = re.compile(r"^([A-Z0-9][A-Z0-9-]*)( \(from memory\))?$")
C13_RANGE = (-10.0, 240.0)
H1_RANGE = (-1.0, 16.0)

# Minimum size of each file, as agreed with the curator of that file
# (compounds, assigned carbons, assigned proton environments). A file that
# shrinks below its floor fails, so rows cannot silently disappear.
FLOORS = {
    "aliphatic.tsv": (230, 1300, 1000),
    "aromatic.tsv": (210, 1500, 1100),
}


class Assignment:
    """One "lhs=rhs" entry of a c13 or h1 field, already split."""

    def __init__(self, atoms, values, kind):
        self.atoms = atoms  # tuple of atom indices
        self.values = values  # tuple of floats (1 or 2)
        # kind: "plain" (all atoms share one value), "diastereotopic"
        # (each atom has two H with the two values) or "pair" (two
        # graph-equivalent atoms with one value each, unassigned order)
        self.kind = kind

    def value_key(self, atom):
        """Comparable value of one atom, for the symmetry check."""
        if self.kind == "pair":
            return ("pair",)
        return (self.kind,) + tuple(self.values)


def parse_field(text, nucleus):
    """Parse a c13 or h1 field; returns (list of Assignment, list of errors)."""
    if text == "-":
        return [], []
    out, errors = [], []
    for entry in text.split(";"):
        if entry.count("=") != 1:
            errors.append(f"{nucleus}: entry {entry!r} is not 'atoms=value'")
            continue
        lhs, rhs = entry.split("=")
        pair_lhs = INDEX_PAIR_RE.match(lhs)
        pair_rhs = PAIR_VALUE_RE.match(rhs)
        if pair_lhs:
            if not pair_rhs:
                errors.append(f"{nucleus}: pair {lhs!r} needs two values 'a|b', got {rhs!r}")
                continue
            atoms = (int(pair_lhs.group(1)), int(pair_lhs.group(2)))
            values = (float(pair_rhs.group(1)), float(pair_rhs.group(2)))
            if atoms[0] == atoms[1]:
                errors.append(f"{nucleus}: pair {lhs!r} names one atom twice")
                continue
            out.append(Assignment(atoms, values, "pair"))
        elif INDEX_LIST_RE.match(lhs):
            atoms = tuple(int(x) for x in lhs.split(","))
            if pair_rhs:
                if nucleus != "h1":
                    errors.append(f"{nucleus}: two values {rhs!r} on {lhs!r} only allowed in h1")
                    continue
                values = (float(pair_rhs.group(1)), float(pair_rhs.group(2)))
                out.append(Assignment(atoms, values, "diastereotopic"))
            elif VALUE_RE.match(rhs):
                out.append(Assignment(atoms, (float(rhs),), "plain"))
            else:
                errors.append(f"{nucleus}: value {rhs!r} is not a number")
        else:
            errors.append(f"{nucleus}: atom list {lhs!r} is malformed")
    return out, errors


def load_source_keys():
    keys = set()
    for line in SOURCES_MD.read_text(encoding="utf-8").splitlines():
        cells = [c.strip() for c in line.strip().strip("|").split("|")]
        if line.startswith("|") and cells and cells[0] not in ("key", "") and not set(cells[0]) <= set("-: "):
            keys.add(cells[0])
    return keys


class TableFile:
    def __init__(self, path):
        self.path = path
        self.name = path.name
        self.lines = path.read_text(encoding="utf-8").split("\n")
        if self.lines and self.lines[-1] == "":
            self.lines.pop()
        self.header_errors = []
        self.records = []  # (line number, list of fields)
        n_comments = len(HEADER_COMMENTS)
        for i, (prefix, expected) in enumerate(HEADER_COMMENTS):
            line = self.lines[i] if i < len(self.lines) else ""
            if not line.startswith(prefix + " "):
                self.header_errors.append(f"line {i + 1}: expected '{prefix} ...', got {line!r}")
                continue
            rest = line[len(prefix) + 1:].strip()
            if expected is not None and rest != expected:
                self.header_errors.append(f"line {i + 1}: expected '{prefix} {expected}', got {line!r}")
            if prefix == "# version:" and not re.match(r"^[1-9]\d*$", rest):
                self.header_errors.append(f"line {i + 1}: version must be a positive integer")
        header = self.lines[n_comments] if len(self.lines) > n_comments else ""
        if header.split("\t") != COLUMNS:
            self.header_errors.append(f"line {n_comments + 1}: column header must be {COLUMNS}, got {header!r}")
        for lineno, line in enumerate(self.lines[n_comments + 1:], start=n_comments + 2):
            self.records.append((lineno, line.split("\t")))


def reference_files():
    return sorted(REFERENCE_DIR.glob("*.tsv"))


@pytest.fixture(scope="module")
def tables():
    files = reference_files()
    assert files, f"no *.tsv files in {REFERENCE_DIR.relative_to(REPO_ROOT)}"
    return [TableFile(p) for p in files]


def well_formed_records(tables):
    """Yield (file, lineno, fields) for rows with the right column count."""
    for t in tables:
        for lineno, fields in t.records:
            if len(fields) == len(COLUMNS):
                yield t, lineno, fields


def fail_with(errors):
    if errors:
        shown = "\n".join(errors[:60])
        more = f"\n... and {len(errors) - 60} more" if len(errors) > 60 else ""
        pytest.fail(f"{len(errors)} problem(s):\n{shown}{more}")


# Each check_* function returns a list of error messages for the given files;
# the test_* functions run them on the real tables, and a self-test runs them
# on deliberately broken rows to show that each one can fail.


def check_header_lines(tables):
    errors = []
    for t in tables:
        errors += [f"{t.name}: {e}" for e in t.header_errors]
    return errors


def check_columns_and_plain_fields(tables):
    errors = []
    for t in tables:
        for lineno, fields in t.records:
            where = f"{t.name}:{lineno}"
            if len(fields) != len(COLUMNS):
                errors.append(f"{where}: {len(fields)} columns instead of {len(COLUMNS)}")
                continue
            for name, value in zip(COLUMNS, fields):
                if value != value.strip() or value == "":
                    errors.append(f"{where}: column {name} is empty or has surrounding whitespace")
            rid, _smiles, solvent, c13, h1, _source = fields
            if not ID_RE.match(rid):
                errors.append(f"{where}: id {rid!r} is not lowercase [a-z0-9-]")
            if solvent not in SOLVENTS:
                errors.append(f"{where}: solvent {solvent!r} not one of {sorted(SOLVENTS)}")
            if c13 == "-" and h1 == "-":
                errors.append(f"{where}: row assigns nothing")
    return errors


def check_ids_unique(tables):
    seen = {}
    errors = []
    for t, lineno, fields in well_formed_records(tables):
        rid = fields[0]
        if rid in seen:
            errors.append(f"{t.name}:{lineno}: id {rid!r} already used at {seen[rid]}")
        else:
            seen[rid] = f"{t.name}:{lineno}"
    return errors


def check_smiles_parse(tables):
    errors = []
    for t, lineno, fields in well_formed_records(tables):
        if Chem.MolFromSmiles(fields[1]) is None:
            errors.append(f"{t.name}:{lineno}: RDKit cannot parse SMILES {fields[1]!r}")
    return errors


def check_sources(tables, keys):
    errors = []
    for t, lineno, fields in well_formed_records(tables):
        m = SOURCE_RE.match(fields[5])
        if not m:
            errors.append(f"{t.name}:{lineno}: source {fields[5]!r} is not 'KEY' or 'KEY (from memory)'")
        elif m.group(1) not in keys:
            errors.append(f"{t.name}:{lineno}: source key {m.group(1)!r} is not in tables/SOURCES.md")
    return errors


def checked_assignments(t, lineno, fields, errors):
    """Parse both fields of a row and check them against the RDKit molecule.

    Returns (mol, {"c13": [...], "h1": [...]}) or None when the row cannot
    be checked further."""
    mol = Chem.MolFromSmiles(fields[1])
    if mol is None:
        return None
    where = f"{t.name}:{lineno} ({fields[0]})"
    n = mol.GetNumAtoms()
    parsed = {}
    for nucleus, text in (("c13", fields[3]), ("h1", fields[4])):
        items, perrs = parse_field(text, nucleus)
        errors += [f"{where}: {e}" for e in perrs]
        seen = set()
        for a in items:
            for i in a.atoms:
                if i >= n:
                    errors.append(f"{where}: {nucleus} atom {i} out of range (molecule has {n} heavy atoms)")
                    continue
                if i in seen:
                    errors.append(f"{where}: {nucleus} atom {i} assigned twice")
                seen.add(i)
                atom = mol.GetAtomWithIdx(i)
                if nucleus == "c13" and atom.GetAtomicNum() != 6:
                    errors.append(f"{where}: c13 on atom {i}, which is {atom.GetSymbol()}, not C")
                if nucleus == "h1":
                    nh = atom.GetTotalNumHs()
                    if nh == 0:
                        errors.append(f"{where}: h1 on atom {i} ({atom.GetSymbol()}), which carries no H")
                    elif a.kind == "diastereotopic" and nh < 2:
                        errors.append(f"{where}: h1 atom {i} has two values but only {nh} H")
            lo, hi = C13_RANGE if nucleus == "c13" else H1_RANGE
            for v in a.values:
                if not lo <= v <= hi:
                    errors.append(f"{where}: {nucleus} value {v} outside {lo}..{hi} ppm")
        parsed[nucleus] = [a for a in items if all(i < n for i in a.atoms)]
    return mol, parsed


def check_atom_assignments(tables):
    errors = []
    for t, lineno, fields in well_formed_records(tables):
        checked_assignments(t, lineno, fields, errors)
    return errors


def symmetry_ranks(mol, smiles):
    has_stereo = any(ch in smiles for ch in "@/\\")
    return list(Chem.CanonicalRankAtoms(mol, breakTies=False, includeChirality=has_stereo))


def check_symmetry(tables):
    errors = []
    for t, lineno, fields in well_formed_records(tables):
        res = checked_assignments(t, lineno, fields, [])
        if res is None:
            continue
        mol, parsed = res
        where = f"{t.name}:{lineno} ({fields[0]})"
        ranks = symmetry_ranks(mol, fields[1])
        graph_ranks = list(Chem.CanonicalRankAtoms(mol, breakTies=False, includeChirality=False))
        classes = defaultdict(list)
        for i, r in enumerate(ranks):
            classes[r].append(i)
        for nucleus, items in parsed.items():
            value_of = {}
            for a in items:
                if a.kind == "pair" and graph_ranks[a.atoms[0]] != graph_ranks[a.atoms[1]]:
                    errors.append(f"{where}: {nucleus} pair {a.atoms} joins atoms that are not graph-equivalent")
                for i in a.atoms:
                    value_of[i] = a.value_key(i)
            for members in classes.values():
                assigned = [i for i in members if i in value_of]
                if not assigned:
                    continue
                missing = [i for i in members if i not in value_of]
                if missing:
                    errors.append(f"{where}: {nucleus} assigns {assigned} but not the equivalent atom(s) {missing}")
                if len({value_of[i] for i in assigned}) > 1:
                    shown = {i: value_of[i] for i in assigned}
                    errors.append(f"{where}: {nucleus} equivalent atoms carry different values {shown}")
    return errors


def count_file(t):
    compounds = carbons = protons = 0
    for lineno, fields in t.records:
        if len(fields) != len(COLUMNS):
            continue
        c13, _ = parse_field(fields[3], "c13")
        h1, _ = parse_field(fields[4], "h1")
        compounds += 1
        carbons += sum(len(a.atoms) for a in c13)
        for a in h1:
            protons += len(a.atoms) * (2 if a.kind == "diastereotopic" else 1)
    return compounds, carbons, protons


def test_header_lines(tables):
    """Each file starts with the # table/version/units/sources lines and the
    column header (basis: common practice for self-describing data tables,
    as laid down in tables/FORMAT.md)."""
    fail_with(check_header_lines(tables))


def test_columns_and_plain_fields(tables):
    """Every row has six tab-separated columns, a well-formed id, a listed
    solvent, at least one assignment and no stray whitespace (basis: common
    practice)."""
    fail_with(check_columns_and_plain_fields(tables))


def test_ids_unique_across_files(tables):
    """Ids are unique over all reference files, so a row can be named by id
    alone (basis: common practice)."""
    fail_with(check_ids_unique(tables))


def test_smiles_parse(tables):
    """Every SMILES is read by RDKit without error (basis: RDKit)."""
    fail_with(check_smiles_parse(tables))


def test_sources_are_listed(tables):
    """The source column holds a key defined in tables/SOURCES.md, optionally
    followed by ' (from memory)' (basis: common practice, tables/SOURCES.md)."""
    keys = load_source_keys()
    assert keys, "no keys found in tables/SOURCES.md"
    fail_with(check_sources(tables, keys))


def test_atom_assignments(tables):
    """Indices are in range of the heavy atoms, c13 only on carbon, h1 only on
    heavy atoms that carry H (RDKit total H count), two values only on atoms
    with two or more H, no atom twice in one field, and shifts within
    physical ranges: 13C -10..240 ppm, 1H -1..16 ppm (basis: RDKit for the
    structure, common practice for the ranges)."""
    fail_with(check_atom_assignments(tables))


def test_symmetry_equivalent_atoms_agree(tables):
    """Atoms that RDKit ranks as symmetry-equivalent (CanonicalRankAtoms with
    breakTies=False; chirality and E/Z included when the SMILES has stereo)
    are either all unassigned or all assigned with the same value in each
    field. Exception: an 'i|j=a|b' pair must join two atoms that are
    equivalent in the bare graph, and then stands for both (basis: RDKit for
    the equivalence; common practice that equivalent nuclei are isochronous)."""
    fail_with(check_symmetry(tables))


def test_counts(tables, capsys):
    """Counts compounds, assigned carbons (every carbon atom, equivalent ones
    included) and proton environments (H set on one heavy atom; each value of
    a diastereotopic pair counts once) per file and overall, and holds each
    file to its agreed floor (basis: common practice)."""
    total = [0, 0, 0]
    errors = []
    lines = []
    for t in tables:
        counts = count_file(t)
        total = [a + b for a, b in zip(total, counts)]
        lines.append(f"{t.name}: {counts[0]} compounds, {counts[1]} carbons, {counts[2]} proton environments")
        floor = FLOORS.get(t.name)
        if floor and any(c < f for c, f in zip(counts, floor)):
            errors.append(f"{t.name}: counts {counts} below floor {floor}")
    lines.append(f"all files: {total[0]} compounds, {total[1]} carbons, {total[2]} proton environments")
    with capsys.disabled():
        print("\n" + "\n".join(lines))
    missing = [name for name in FLOORS if not (REFERENCE_DIR / name).exists()]
    errors += [f"{name}: file with an agreed floor is missing" for name in missing]
    fail_with(errors)


BROKEN_ROWS = {
    # row text (tab-separated) -> the check that must report it
    "bad-col\tCC\tCDCl3\t0=1.0": check_columns_and_plain_fields,
    "Bad_Id\tCC\tCDCl3\t0,1=6.9\t-\tPRETSCH-2009": check_columns_and_plain_fields,
    "bad-solvent\tCC\tCHCl3\t0,1=6.9\t-\tPRETSCH-2009": check_columns_and_plain_fields,
    "bad-smiles\tC1CC\tCDCl3\t0=1.0\t-\tPRETSCH-2009": check_smiles_parse,
    "bad-source\tCC\tCDCl3\t0,1=6.9\t-\tNO-SUCH-KEY (from memory)": check_sources,
    "bad-c13-on-o\tCO\tCDCl3\t1=50.0\t-\tPRETSCH-2009": check_atom_assignments,
    "bad-two-values-on-ch\tCC(C)O\tCDCl3\t-\t1=4.05|4.00\tPRETSCH-2009": check_atom_assignments,
    "bad-index\tCO\tCDCl3\t5=50.0\t-\tPRETSCH-2009": check_atom_assignments,
    "bad-h-count\tCC(C)=O\tCDCl3\t-\t1=2.0\tPRETSCH-2009": check_atom_assignments,
    "bad-twice\tCCO\tCDCl3\t0=18.4;0=18.5\t-\tPRETSCH-2009": check_atom_assignments,
    "bad-shift\tCCO\tCDCl3\t0=250.0\t-\tPRETSCH-2009": check_atom_assignments,
    "bad-missing-equivalent\tCCOCC\tCDCl3\t0=15.2\t-\tPRETSCH-2009": check_symmetry,
    "bad-unequal\tCCOCC\tCDCl3\t0=15.2;4=15.9\t-\tPRETSCH-2009": check_symmetry,
    "bad-pair\tCCO\tCDCl3\t0|1=18.4|58.3\t-\tPRETSCH-2009": check_symmetry,
    "good-e-crotonate\tC/C=C/C(=O)OC\tCDCl3\t-\t0=1.88\tPRETSCH-2009": None,
}


def test_checks_catch_broken_rows(tmp_path):
    """Feeds each check a file with one deliberately broken row and expects
    that check to report it, and feeds all checks a clean row and expects
    silence, so no check above can pass by never failing (basis: common
    practice)."""
    head = "\n".join(
        ["# table: reference-shifts", "# version: 1", "# units: ppm relative to TMS",
         "# sources: keys defined in tables/SOURCES.md", "\t".join(COLUMNS)])
    keys = {"PRETSCH-2009"}
    every_check = [check_header_lines, check_columns_and_plain_fields, check_ids_unique,
                   check_smiles_parse, check_atom_assignments, check_symmetry,
                   lambda ts: check_sources(ts, keys)]
    for n, (row, check) in enumerate(BROKEN_ROWS.items()):
        path = tmp_path / f"case{n}.tsv"
        path.write_text(head + "\n" + row + "\n", encoding="utf-8")
        t = [TableFile(path)]
        if check is None:  # a valid row: every check must stay silent
            for c in every_check:
                assert c(t) == [], (row, c)
            continue
        errors = check(t, keys) if check is check_sources else check(t)
        assert errors, f"{check.__name__} accepted {row!r}"
    dup = tmp_path / "dup.tsv"
    dup.write_text(head + "\nx\tC\tCDCl3\t0=-2.3\t-\tPRETSCH-2009\n"
                   "x\tCC\tCDCl3\t0,1=6.9\t-\tPRETSCH-2009\n", encoding="utf-8")
    assert check_ids_unique([TableFile(dup)])
    bad_head = tmp_path / "head.tsv"
    bad_head.write_text("# table: something-else\n# version: one\nid\tsmiles\n", encoding="utf-8")
    assert len(check_header_lines([TableFile(bad_head)])) >= 3


def test_parser_rejects_malformed_entries():
    """The field parser itself refuses malformed text, so the checks above
    cannot pass on input they failed to read (basis: common practice)."""
    for bad in ("1", "a=2.0", "1=x", "1,=2.0", "1|2=3.0", "1=2.0=3.0", "1|1=2.0|3.0"):
        _, errors = parse_field(bad, "h1")
        assert errors, bad
    _, errors = parse_field("1=2.0|3.0", "c13")
    assert errors
    items, errors = parse_field("0=14.1;1,4=22.9;2|3=30.1|31.0", "c13")
    assert not errors
    assert [a.kind for a in items] == ["plain", "plain", "pair"]
    items, errors = parse_field("2=1.10|1.25", "h1")
    assert not errors and items[0].kind == "diastereotopic"
