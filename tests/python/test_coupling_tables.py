"""Checks of the coupling tables in tables/couplings/.

Run with Debian's interpreter: ``/usr/bin/python3 -m pytest tests/python``.

Files under test (format: tables/FORMAT.md, section "Coupling tables"):

    hh_rules.tsv        J(H,H) rule values known to the engine by id
    hh_alkene.tsv       cis/trans/geminal couplings of CH2=CH-X by the group X
    hh_aromatic.tsv     J(H,H) in aromatic rings by ring positions
    heteronuclear.tsv   J(H,F), J(H,P), J(C,F), J(C,P) by anchor and path
    ch_one_bond.tsv     1J(C,H) by carbon environment (J(C,D) is scaled from it)
    karplus.tsv         Haasnoot-de Leeuw-Altona parameters, electronegativities

Besides the layout (header lines, columns, unique ids, source keys defined in
tables/SOURCES.md, numbers, ranges that contain the value), every SMARTS and
example is parsed with RDKit, and each row is applied to its own example the
way FORMAT.md describes, with RDKit substructure matching, so that the row
order (first applicable row wins) stays honest. One cross-check uses data
outside the coupling tables: 1J(C,H) of the solvents' protio forms times
gamma(2H)/gamma(1H) against the C-D splittings of tables/solvents.tsv.
"""

import math
import re
from collections import deque
from pathlib import Path

import pytest
from rdkit import Chem, RDLogger

RDLogger.DisableLog("rdApp.*")

REPO_ROOT = Path(__file__).resolve().parents[2]
TABLES = REPO_ROOT / "tables"
COUPLINGS = TABLES / "couplings"
SOURCES_MD = TABLES / "SOURCES.md"

ID_RE = re.compile(r"^[a-z0-9]+(-[a-z0-9]+)*$")
SOURCE_RE = re.compile(r"^([A-Z0-9][A-Z0-9-]*)( \(from memory\))?$")
NUM_RE = re.compile(r"^-?\d+(\.\d+)?$")
# gamma(2H)/gamma(1H): IUPAC frequency ratio 15.350609 % (HARRIS-2001).
DEUTERIUM_RATIO = 0.15350609

SPECS = {
    "hh_rules": ("coupling-hh-rules", "Hz",
                 ["id", "bonds", "j_hz", "uncertainty_hz", "min_hz", "max_hz", "example", "source", "comment"]),
    "hh_alkene": ("coupling-hh-alkene", "Hz",
                  ["id", "label", "smarts", "example", "j_cis_hz", "j_trans_hz", "j_gem_hz", "uncertainty_hz",
                   "source", "comment"]),
    "hh_aromatic": ("coupling-hh-aromatic", "Hz",
                    ["id", "ring", "atoms", "positions", "bonds", "j_hz", "uncertainty_hz", "min_hz", "max_hz",
                     "example", "source", "comment"]),
    "heteronuclear": ("coupling-heteronuclear", "Hz",
                      ["id", "pair", "anchor", "path", "carrier", "geometry", "j_hz", "uncertainty_hz", "min_hz",
                       "max_hz", "example", "source", "comment"]),
    "ch_one_bond": ("coupling-ch-one-bond", "Hz",
                    ["id", "smarts", "example", "j_hz", "uncertainty_hz", "source", "comment"]),
    "karplus": ("coupling-karplus", "Hz (parameters p1-p5, sigma), degrees (p6), none (p7, electronegativities)",
                ["kind", "id", "value", "source", "comment"]),
}
NUMERIC = {
    "hh_rules": ["j_hz", "uncertainty_hz", "min_hz", "max_hz"],
    "hh_alkene": ["j_cis_hz", "j_trans_hz", "j_gem_hz", "uncertainty_hz"],
    "hh_aromatic": ["j_hz", "uncertainty_hz", "min_hz", "max_hz"],
    "heteronuclear": ["j_hz", "uncertainty_hz", "min_hz", "max_hz"],
    "ch_one_bond": ["j_hz", "uncertainty_hz"],
    "karplus": ["value"],
}
# The ids libnmrpred/src/couplings/coupling_tables.cpp knows, with their bond counts.
HH_RULE_BONDS = {
    "hh-2j-sp3-base": 2, "hh-2j-sp3-pi": 2, "hh-2j-sp3-heteroatom": 2, "hh-2j-cyclopropane": 2,
    "hh-2j-oxirane": 2, "hh-2j-ethylene": 2, "hh-3j-ethylene-cis": 3, "hh-3j-ethylene-trans": 3,
    "hh-3j-free-intercept": 3, "hh-3j-free-slope": 3, "hh-3j-cyclopropane-cis": 3,
    "hh-3j-cyclopropane-trans": 3, "hh-3j-cyclopropane-unresolved": 3, "hh-3j-oxirane-cis": 3,
    "hh-3j-oxirane-trans": 3, "hh-3j-oxirane-unresolved": 3, "hh-3j-ring4-unresolved": 3,
    "hh-3j-ring5-unresolved": 3, "hh-3j-ring6-cis": 3, "hh-3j-ring6-trans": 3, "hh-3j-ring6-unresolved": 3,
    "hh-3j-sp3-alkene": 3, "hh-3j-sp3-alkene-ring": 3, "hh-3j-sp3-aldehyde": 3, "hh-3j-sp2-aldehyde": 3,
    "hh-3j-diene": 3, "hh-3j-alkene-cis-cc": 3, "hh-3j-alkene-trans-cc": 3, "hh-3j-alkene-cis-conj": 3,
    "hh-3j-alkene-trans-conj": 3, "hh-3j-alkene-ring3": 3, "hh-3j-alkene-ring4": 3, "hh-3j-alkene-ring5": 3,
    "hh-3j-alkene-ring6": 3, "hh-3j-alkene-ring7": 3, "hh-4j-allylic": 4, "hh-4j-propargylic": 4,
    "hh-5j-homoallylic": 5, "hh-5j-homopropargylic": 5, "hh-3j-aromatic-6ring": 3, "hh-4j-aromatic-6ring": 4,
    "hh-5j-aromatic-6ring": 5, "hh-3j-aromatic-5ring": 3, "hh-4j-aromatic-5ring": 4, "hh-3j-hoch": 3,
    "hh-3j-hnch": 3, "hh-3j-hsch": 3,
}


class Table:
    def __init__(self, path):
        lines = path.read_text(encoding="utf-8").split("\n")
        assert lines[-1] == "", f"{path.name}: the file must end with a newline"
        lines.pop()
        self.path = path
        self.head = lines[:4]
        self.columns = lines[4].split("\t")
        self.raw_rows = [ln.split("\t") for ln in lines[5:]]
        self.rows = [dict(zip(self.columns, r)) for r in self.raw_rows]


@pytest.fixture(scope="module")
def tables():
    out = {}
    for key in SPECS:
        path = COUPLINGS / f"{key}.tsv"
        assert path.is_file(), f"{path.relative_to(REPO_ROOT)} is missing"
        out[key] = Table(path)
    return out


@pytest.fixture(scope="module")
def source_keys():
    keys = set()
    for line in SOURCES_MD.read_text(encoding="utf-8").splitlines():
        m = re.match(r"^\| ([A-Z0-9][A-Z0-9-]*) \|", line)
        if m:
            keys.add(m.group(1))
    assert keys
    return keys


def num(text):
    return None if text == "-" else float(text)


def mol(smiles):
    m = Chem.MolFromSmiles(smiles)
    assert m is not None, f"RDKit cannot read {smiles!r}"
    return m


def smarts(text):
    p = Chem.MolFromSmarts(text)
    assert p is not None, f"RDKit cannot read SMARTS {text!r}"
    return p


# --------------------------------------------------------------------------
# Layout
# --------------------------------------------------------------------------

@pytest.mark.parametrize("key", sorted(SPECS))
def test_header_and_columns(tables, key, source_keys):
    """Four header lines (name, version, units, sources) and the documented columns."""
    name, units, columns = SPECS[key]
    t = tables[key]
    assert t.head[0] == f"# table: {name}"
    assert re.match(r"^# version: [1-9]\d*$", t.head[1]), t.head[1]
    assert t.head[2] == f"# units: {units}"
    assert t.head[3].startswith("# sources: ") and "; keys defined in tables/SOURCES.md" in t.head[3]
    named = t.head[3][len("# sources: "):].split(";")[0].split()
    used = {SOURCE_RE.match(r["source"]).group(1) for r in t.rows if SOURCE_RE.match(r["source"])}
    assert set(named) == used, f"sources line {sorted(named)} != keys used {sorted(used)}"
    assert set(named) <= source_keys
    assert t.columns == columns
    for i, r in enumerate(t.raw_rows):
        assert len(r) == len(columns), f"{key}.tsv row {i + 6}: {len(r)} fields"
        assert all(f != "" and f == f.strip() for f in r), f"{key}.tsv row {i + 6}: empty or padded field"


@pytest.mark.parametrize("key", sorted(SPECS))
def test_ids_sources_numbers(tables, key, source_keys):
    """Unique well-formed ids, known source keys, numbers, positive uncertainties, ranges that hold the value."""
    t = tables[key]
    ids = [r["id"] for r in t.rows]
    assert len(ids) == len(set(ids)), "duplicate ids"
    for r in t.rows:
        where = f"{key}.tsv {r['id']}"
        if key != "karplus":
            assert ID_RE.match(r["id"]), where
        m = SOURCE_RE.match(r["source"])
        assert m and m.group(1) in source_keys, f"{where}: source {r['source']!r}"
        for col in NUMERIC[key]:
            v = r[col]
            assert v == "-" or NUM_RE.match(v), f"{where}: {col} = {v!r}"
        if "uncertainty_hz" in r:
            u = num(r["uncertainty_hz"])
            assert u is not None and 0 < u <= 100, where
        values = [num(r[c]) for c in ("j_hz", "j_cis_hz", "j_trans_hz", "j_gem_hz") if c in r and r[c] != "-"]
        assert all(abs(v) <= 1000 for v in values), f"{where}: |J| beyond 1000 Hz"
        if "min_hz" in r:
            lo, hi, j = num(r["min_hz"]), num(r["max_hz"]), num(r["j_hz"])
            assert j is not None, where
            if lo is not None and hi is not None:
                assert lo <= hi, where
            if lo is not None:
                assert lo <= j, where
            if hi is not None:
                assert j <= hi, where
        if "example" in r and r["example"] != "-":
            mol(r["example"])


# --------------------------------------------------------------------------
# hh_rules.tsv
# --------------------------------------------------------------------------

def test_hh_rules_ids_and_bonds(tables):
    """Every row is a rule the engine knows, with the bond count it describes; every rule has a row."""
    rows = {r["id"]: r for r in tables["hh_rules"].rows}
    assert set(rows) == set(HH_RULE_BONDS)
    for rid, r in rows.items():
        assert int(r["bonds"]) == HH_RULE_BONDS[rid], rid


def test_hh_rules_sane_values(tables):
    """Signs and sizes the trade expects (COMMON-PRACTICE): sp3 geminal negative, vicinal and aromatic positive,
    allylic and propargylic negative, trans above cis."""
    j = {r["id"]: float(r["j_hz"]) for r in tables["hh_rules"].rows}
    assert -16 < j["hh-2j-sp3-base"] < -10
    assert j["hh-2j-sp3-pi"] < 0 < j["hh-2j-sp3-heteroatom"]
    assert j["hh-2j-oxirane"] > 0 > j["hh-2j-cyclopropane"]
    for rid, v in j.items():
        if rid.startswith("hh-3j") and rid != "hh-3j-free-slope":
            assert 0 < v < 20, rid
    assert j["hh-4j-allylic"] < 0 and j["hh-4j-propargylic"] < 0
    assert j["hh-3j-ethylene-trans"] > j["hh-3j-ethylene-cis"]
    assert j["hh-3j-alkene-trans-cc"] > j["hh-3j-alkene-cis-cc"]
    assert j["hh-3j-alkene-trans-conj"] > j["hh-3j-alkene-cis-conj"]
    assert j["hh-3j-cyclopropane-cis"] > j["hh-3j-cyclopropane-trans"]
    assert j["hh-3j-oxirane-cis"] > j["hh-3j-oxirane-trans"]
    rings = [j[f"hh-3j-alkene-ring{n}"] for n in range(3, 8)]
    assert rings == sorted(rings), "cycloalkene 3J grows with ring size"
    # The freely rotating relation reproduces ethyl chloride (7.2 Hz, PRETSCH-2009, from memory)
    # with Huggins chi(Cl) 3.15 (HUGGINS-1953, from memory).
    assert abs(j["hh-3j-free-intercept"] + j["hh-3j-free-slope"] * (3.15 - 2.20) - 7.2) < 0.3


# --------------------------------------------------------------------------
# hh_alkene.tsv: first applicable row wins
# --------------------------------------------------------------------------

def first_substituent_row(rows, m, skeleton, atom):
    """First row whose SMARTS maps its atom 0 on `atom` and no atom on the skeleton (FORMAT.md)."""
    for r in rows:
        p = smarts(r["smarts"])
        for match in m.GetSubstructMatches(p, uniquify=False, maxMatches=10000):
            if match[0] == atom and not (set(match[1:]) & skeleton):
                return r
    return None


def test_hh_alkene_rows(tables):
    """Each example is a vinyl compound whose substituent selects the row itself; trans > cis for each row."""
    rows = tables["hh_alkene"].rows
    for r in rows:
        m = mol(r["example"])
        assert m.GetBondBetweenAtoms(0, 1).GetBondType() == Chem.BondType.DOUBLE, r["id"]
        assert m.GetAtomWithIdx(0).GetTotalNumHs() == 2 and m.GetAtomWithIdx(1).GetTotalNumHs() == 1, r["id"]
        assert m.GetBondBetweenAtoms(1, 2) is not None, r["id"]
        got = first_substituent_row(rows, m, {0, 1}, 2)
        assert got is not None and got["id"] == r["id"], f"{r['id']}: example selects {got and got['id']}"
        assert float(r["j_trans_hz"]) > float(r["j_cis_hz"]) > 0, r["id"]
        assert -5 < float(r["j_gem_hz"]) < 5, r["id"]


# --------------------------------------------------------------------------
# hh_aromatic.tsv
# --------------------------------------------------------------------------

def ring_tokens(m, ring, aromatic_rings):
    out = []
    for a in ring:
        atom = m.GetAtomWithIdx(a)
        t = atom.GetSymbol().lower()
        if atom.GetFormalCharge() > 0:
            t += "+"
        elif atom.GetFormalCharge() < 0:
            t += "-"
        if sum(1 for r in aromatic_rings if a in r) > 1:
            t += "*"
        out.append(t)
    return out


def numberings(tokens, atoms):
    """(start, direction) pairs under which the ring tokens read as `atoms`."""
    n = len(tokens)
    for start in range(n):
        for d in (1, -1):
            if [tokens[(start + d * q) % n] for q in range(n)] == atoms:
                yield start, d


def test_hh_aromatic_rows(tables):
    """Ring atoms are element tokens; positions and bond counts agree; the parent example has such a ring,
    and its pair at those positions is served by this row first (file order)."""
    rows = tables["hh_aromatic"].rows
    for r in rows:
        atoms = r["atoms"].split(".")
        assert 5 <= len(atoms) <= 6, r["id"]
        for t in atoms:
            assert re.match(r"^[a-z]{1,2}[+-]?\*?$", t), f"{r['id']}: token {t!r}"
        a, b = (int(x) for x in r["positions"].split(","))
        n = len(atoms)
        assert 1 <= a < b <= n, r["id"]
        assert int(r["bonds"]) == min(b - a, n - (b - a)) + 2, r["id"]
        m = mol(r["example"])
        info = m.GetRingInfo()
        aromatic = [list(ring) for ring in info.AtomRings()
                    if len(ring) in (5, 6) and all(m.GetAtomWithIdx(i).GetIsAromatic() for i in ring)]
        found = False
        for ring in aromatic:
            tokens = ring_tokens(m, ring, aromatic)
            for start, d in numberings(tokens, atoms):
                ia, ib = ring[(start + d * (a - 1)) % n], ring[(start + d * (b - 1)) % n]
                assert m.GetAtomWithIdx(ia).GetTotalNumHs() >= 1 and m.GetAtomWithIdx(ib).GetTotalNumHs() >= 1, \
                    f"{r['id']}: positions carry no proton in {r['example']}"
                # First row in file order serving this pair of ring atoms.
                first = None
                for other in rows:
                    oa = other["atoms"].split(".")
                    pa, pb = (int(x) for x in other["positions"].split(","))
                    for s2, d2 in numberings(tokens, oa):
                        pos = {ring[(s2 + d2 * (pa - 1)) % n], ring[(s2 + d2 * (pb - 1)) % n]}
                        if pos == {ia, ib}:
                            first = other
                            break
                    if first is not None:
                        break
                assert first is not None and first["id"] == r["id"], f"{r['id']}: served by {first and first['id']}"
                found = True
        assert found, f"{r['id']}: no ring of {r['example']} reads {r['atoms']}"


# --------------------------------------------------------------------------
# heteronuclear.tsv
# --------------------------------------------------------------------------

PATH_RE = re.compile(r"^[A-Za-z]{1,2}([-=#:][A-Za-z]{1,2}){1,5}$")


def bond_char(b):
    return {Chem.BondType.SINGLE: "-", Chem.BondType.DOUBLE: "=", Chem.BondType.TRIPLE: "#",
            Chem.BondType.AROMATIC: ":"}.get(b.GetBondType(), "?")


def token(atom):
    s = atom.GetSymbol()
    return s.lower() if atom.GetIsAromatic() else s


def shortest_path_texts(m, start, depth):
    """{target atom: set of path texts} over every shortest path from `start`, protons as path ends."""
    dist, preds = {start: 0}, {start: []}
    queue = deque([start])
    while queue:
        a = queue.popleft()
        if dist[a] == depth or (m.GetAtomWithIdx(a).GetAtomicNum() == 1 and a != start):
            continue
        for nb in m.GetAtomWithIdx(a).GetNeighbors():
            b = nb.GetIdx()
            if b not in dist:
                dist[b] = dist[a] + 1
                preds[b] = [a]
                queue.append(b)
            elif dist[b] == dist[a] + 1:
                preds[b].append(a)

    def paths(t):
        if t == start:
            return [[start]]
        return [p + [t] for q in preds[t] for p in paths(q)]

    out = {}
    for t in dist:
        if t == start:
            continue
        texts = set()
        for p in paths(t):
            s = token(m.GetAtomWithIdx(p[0]))
            for x, y in zip(p, p[1:]):
                s += bond_char(m.GetBondBetweenAtoms(x, y)) + token(m.GetAtomWithIdx(y))
            texts.add(s)
        out[t] = texts
    return out


def anchor_matches(r, m, atom):
    return any(match[0] == atom for match in m.GetSubstructMatches(smarts(r["anchor"]), uniquify=False))


def test_heteronuclear_rows(tables):
    """Pair, path, carrier and geometry are well formed; in each example the anchor matches atom 0, the path
    leads from it to a partner of the right kind, and for some such partner the row is the first that applies."""
    rows = tables["heteronuclear"].rows
    for r in rows:
        rid = r["id"]
        assert r["pair"] in ("hf", "hp", "cf", "cp"), rid
        assert PATH_RE.match(r["path"]), f"{rid}: path {r['path']!r}"
        heavy = "F" if r["pair"][1] == "f" else "P"
        assert r["path"].startswith(heavy), rid
        assert r["path"].endswith("H") == (r["pair"][0] == "h"), rid
        assert r["carrier"] in ("*", "CH3", "CH2", "CH"), rid
        assert r["geometry"] in ("-", "cis", "trans"), rid
        if r["geometry"] != "-":
            assert r["path"].count("=") == 1 and len(re.split(r"[-=#:]", r["path"])) == 4, rid
        smarts(r["anchor"])
        m = Chem.AddHs(mol(r["example"]))
        assert m.GetAtomWithIdx(0).GetSymbol() == heavy, f"{rid}: atom 0 of the example is not {heavy}"
        assert anchor_matches(r, m, 0), f"{rid}: anchor does not match atom 0 of its example"
        bonds = len(re.split(r"[-=#:]", r["path"])) - 1
        texts = shortest_path_texts(m, 0, bonds)
        partners = [t for t, s in texts.items() if r["path"] in s]
        assert partners, f"{rid}: no path {r['path']} in {r['example']}"

        def applies(other, t):
            if other["pair"] != r["pair"] or other["path"] not in texts.get(t, ()):
                return False
            if not anchor_matches(other, m, 0):
                return False
            if other["carrier"] != "*":
                carrier = m.GetAtomWithIdx(t).GetNeighbors()[0]
                if f"CH{carrier.GetTotalNumHs(includeNeighbors=True)}".replace("CH1", "CH") != other["carrier"]:
                    return False
            return other["geometry"] in ("-", r["geometry"])

        served = False
        for t in partners:
            for other in rows:
                if applies(other, t):
                    served |= other["id"] == rid
                    break
        assert served, f"{rid}: an earlier row serves every partner in its example"


def test_heteronuclear_sane_values(tables):
    """Sizes the trade expects (COMMON-PRACTICE): 1J(C,F) 150-300 Hz, 2J(H,F) of CH2F above 40 Hz,
    1J(P,H) above 150 Hz, long-range couplings below 60 Hz."""
    for r in tables["heteronuclear"].rows:
        j = abs(float(r["j_hz"]))
        bonds = len(re.split(r"[-=#:]", r["path"])) - 1
        if r["pair"] == "cf" and bonds == 1:
            assert 150 <= j <= 300, r["id"]
        if r["pair"] == "hp" and bonds == 1:
            assert 150 <= j <= 800, r["id"]
        if bonds >= 3:
            assert j < 60, r["id"]


# --------------------------------------------------------------------------
# ch_one_bond.tsv and the solvent splittings
# --------------------------------------------------------------------------

def first_carbon_row(rows, m, atom):
    for r in rows:
        if any(match[0] == atom for match in m.GetSubstructMatches(smarts(r["smarts"]), uniquify=False)):
            return r
    return None


def test_ch_one_bond_rows(tables):
    """Each example's atom 0 is a carbon with a proton that selects the row itself; values 100-300 Hz."""
    rows = tables["ch_one_bond"].rows
    for r in rows:
        m = mol(r["example"])
        a = m.GetAtomWithIdx(0)
        assert a.GetSymbol() == "C" and a.GetTotalNumHs() >= 1, r["id"]
        got = first_carbon_row(rows, m, 0)
        assert got is not None and got["id"] == r["id"], f"{r['id']}: example selects {got and got['id']}"
        assert 100 <= float(r["j_hz"]) <= 300, r["id"]


SOLVENT_PROTIO = {
    # solvents.tsv name: (protio SMILES, {carbon atom: index into the c13_ppm list})
    "CDCl3": ("ClC(Cl)Cl", {1: 0}),
    "DMSO-d6": ("CS(C)=O", {0: 0}),
    "CD3OD": ("CO", {0: 0}),
    "acetone-d6": ("CC(C)=O", {0: 0}),
    "C6D6": ("c1ccccc1", {0: 0}),
    "CD3CN": ("CC#N", {0: 0}),
    "CD2Cl2": ("ClCCl", {1: 0}),
    "THF-d8": ("C1CCOC1", {0: 0, 2: 1}),
    "toluene-d8": ("Cc1ccccc1", {0: 0, 4: 1}),
}


def test_one_bond_rows_give_the_solvent_cd_splittings(tables):
    """1J(C,H) x gamma(2H)/gamma(1H) of the first applicable row reproduces the C-D splittings of
    tables/solvents.tsv (j_source COMMON-PRACTICE) within the row's uncertainty."""
    solvents = Table(TABLES / "solvents.tsv")
    rows = tables["ch_one_bond"].rows
    by_name = {s["name"]: s for s in solvents.rows}
    for name, (smi, carbons) in SOLVENT_PROTIO.items():
        s = by_name[name]
        js = s["j_cd_hz"].split(";")
        m = mol(smi)
        for atom, k in carbons.items():
            r = first_carbon_row(rows, m, atom)
            assert r is not None, name
            want = float(js[k])
            got = float(r["j_hz"]) * DEUTERIUM_RATIO
            tol = float(r["uncertainty_hz"]) * DEUTERIUM_RATIO
            assert abs(got - want) <= tol, f"{name} C{atom}: {r['id']} gives {got:.2f}, table {want}"


# --------------------------------------------------------------------------
# karplus.tsv
# --------------------------------------------------------------------------

def test_karplus_rows(tables):
    """p1..p7 and sigma given once; electronegativities for H, C, N, O, F, Cl, Br, I; Karplus shape:
    the relation without substituents is largest at 180 degrees, smallest near 90 (KARPLUS-1959)."""
    rows = tables["karplus"].rows
    hla = {r["id"]: float(r["value"]) for r in rows if r["kind"] == "hla"}
    assert set(hla) == {"p1", "p2", "p3", "p4", "p5", "p6", "p7", "sigma"}
    chi = {r["id"]: float(r["value"]) for r in rows if r["kind"] == "electronegativity"}
    assert {r["kind"] for r in rows} <= {"hla", "electronegativity"}
    for el in ("h", "c", "n", "o", "f", "cl", "br", "i"):
        assert f"chi-{el}" in chi
    for k in chi:
        assert re.match(r"^chi-[a-z]{1,2}$", k), k
        sym = k[4:].capitalize()
        assert Chem.GetPeriodicTable().GetAtomicNumber(sym) > 0, k
        assert 0.5 < chi[k] < 4.5, k
    assert chi["chi-f"] > chi["chi-o"] > chi["chi-cl"] > chi["chi-n"] > chi["chi-c"] > chi["chi-h"]
    def j(phi):
        c = math.cos(math.radians(phi))
        return hla["p1"] * c * c + hla["p2"] * c + hla["p3"]

    values = {phi: j(phi) for phi in range(0, 181, 5)}
    assert max(values, key=values.get) == 180
    assert 80 <= min(values, key=values.get) <= 100
    assert 0 < hla["sigma"] < 3
