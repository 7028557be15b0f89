"""Tests of the Python API of nmrpred (bindings/python/nmrpred).

Run with Debian's interpreter from the repository root:
    PYTHONPATH=build/python /usr/bin/python3 -m pytest bindings/python/tests
NMRPRED_BUILD_DIR (default <repo>/build) only says where the build is.

References outside the project, named beside each check:
  * RDKit (Debian python3-rdkit): Chem.AddHs for atom and hydrogen counts,
    Chem.MolToMolBlock / SDWriter to write MOL and SDF text, and
    Chem.CanonicalRankAtoms(..., breakTies=False, includeChirality=False) for
    symmetry classes.
  * OpenSMILES specification (opensmiles.org), sections 3.1.4-3.1.6:
    isotope prefix ([13CH4], [2H]), charge suffix ([NH4+]).
  * Common practice (any introductory NMR text): enantiotopic protons, such
    as the CH2 protons of ethanol, are equivalent; diastereotopic protons,
    such as the CH2 protons of butan-2-ol, are not. A HOSE code describes an
    atom's surroundings only, so atoms a graph automorphism exchanges share it.
    Equivalent nuclei resonate together (one shift, one signal); a 13C
    spectrum is listed downfield first; DEPT-style editing tells C, CH, CH2
    and CH3 apart by the protons on the carbon.
  * GOTTLIEB-1997 (tables/SOURCES.md), Table 2: 13C of toluene in CDCl3 (from
    memory), kept as the built-in record "toluene" in
    tables/reference/aromatic.tsv (read here as text, independently of the
    library's parser).
  * Common practice for 1H spectra: a signal's integral is its number of
    protons (CH3 3, CH2 2, OH 1), so the integrals add up to the proton count
    (RDKit counts the hydrogens); protons on O, N and S exchange and vanish
    in D2O or CD3OD; 2H gives no 1H signal; diastereotopic protons give
    separate signals.
  * FULMER-2010 (tables/SOURCES.md): residual CHCl3 7.26 ppm, CDCl3 77.16 ppm,
    water in CDCl3 1.56 ppm, HDO in D2O 4.79 ppm (from memory).
Records with "demo-" ids are demo data with invented values, not published.
"""

import json
import os
import pathlib
import re
import sys
import threading

import numpy as np
import pytest

REPO_ROOT = pathlib.Path(__file__).resolve().parents[3]
BUILD_DIR = pathlib.Path(os.environ.get("NMRPRED_BUILD_DIR", REPO_ROOT / "build")).resolve()
# Only locates the built package when PYTHONPATH does not already name it.
if str(BUILD_DIR / "python") not in sys.path:
    sys.path.append(str(BUILD_DIR / "python"))

import nmrpred  # noqa: E402

from rdkit import Chem, RDLogger  # noqa: E402

RDLogger.DisableLog("rdApp.*")


def rdkit_with_h(smiles):
    mol = Chem.MolFromSmiles(smiles)
    assert mol is not None, f"RDKit cannot read {smiles}"
    return Chem.AddHs(mol)


def partition(labels):
    """Set of frozensets of indices sharing a label, independent of the label values."""
    groups = {}
    for i, label in enumerate(labels):
        groups.setdefault(label, set()).add(i)
    return {frozenset(g) for g in groups.values()}


def map_to_rdkit(pred, mol_h):
    """Our atom index -> RDKit atom index. Heavy atoms keep the input order in
    both; hydrogens are matched by the heavy atom they are bonded to."""
    mapping = {}
    heavy = pred.heavy_atom_count
    for i in range(heavy):
        mapping[i] = i
    rd_h = {}
    for atom in mol_h.GetAtoms():
        if atom.GetAtomicNum() == 1:
            rd_h.setdefault(atom.GetNeighbors()[0].GetIdx(), []).append(atom.GetIdx())
    used = {}
    for i in range(heavy, pred.atom_count):
        a = int(pred.attached_to[i])
        k = used.get(a, 0)
        mapping[i] = rd_h[a][k]
        used[a] = k + 1
    return mapping


# ---------------------------------------------------------------- version


def test_version_matches_the_project_version_in_cmake():
    text = (REPO_ROOT / "CMakeLists.txt").read_text()
    m = re.search(r"project\(\s*nmrpred\s+VERSION\s+([0-9]+\.[0-9]+\.[0-9]+)", text)
    assert m, "project(nmrpred VERSION x.y.z) not found in CMakeLists.txt"
    assert nmrpred.__version__ == m.group(1)


# ---------------------------------------------------------- single record


def test_ethanol_atoms_agree_with_rdkit():
    p = nmrpred.predict("CCO ethanol")
    mol_h = rdkit_with_h("CCO")  # source: RDKit Chem.AddHs
    assert isinstance(p, nmrpred.Prediction)
    assert p.record == 0
    assert p.title == "ethanol"
    assert p.atom_count == mol_h.GetNumAtoms()
    assert p.heavy_atom_count == mol_h.GetNumHeavyAtoms()
    assert p.elements[: p.heavy_atom_count] == ["C", "C", "O"]
    assert list(p.atomic_numbers) == [1 if s == "H" else Chem.GetPeriodicTable().GetAtomicNumber(s)
                                      for s in p.elements]
    # Hydrogens per heavy atom, as RDKit counts them.
    for i in range(p.heavy_atom_count):
        ours = int(np.sum(p.attached_to == i))
        assert ours == mol_h.GetAtomWithIdx(i).GetTotalNumHs(includeNeighbors=True), f"atom {i}"
    assert list(p.attached_to[: p.heavy_atom_count]) == [-1, -1, -1]
    assert not np.any(p.isotopes)
    assert not np.any(p.charges)


def test_per_atom_arrays_are_read_only_int64_of_atom_count_length():
    p = nmrpred.predict("CC(=O)O")
    for name in ("atomic_numbers", "isotopes", "charges", "attached_to", "classes", "topological_classes"):
        a = getattr(p, name)
        assert isinstance(a, np.ndarray), name
        assert a.dtype == np.int64, name
        assert a.shape == (p.atom_count,), name
        with pytest.raises(ValueError):
            a[0] = 99
    assert len(p.hose) == len(p.elements) == p.atom_count
    assert all(isinstance(h, str) and h for h in p.hose)


def test_ethanol_classes_follow_textbook_equivalence():
    """Common practice: ethanol shows CH3, CH2 and OH proton sets; its CH2 protons
    are enantiotopic and therefore equivalent."""
    p = nmrpred.predict("CCO")
    ch3 = {int(p.classes[i]) for i in range(p.atom_count) if p.attached_to[i] == 0}
    ch2 = {int(p.classes[i]) for i in range(p.atom_count) if p.attached_to[i] == 1}
    oh = {int(p.classes[i]) for i in range(p.atom_count) if p.attached_to[i] == 2}
    assert len(ch3) == 1 and len(ch2) == 1 and len(oh) == 1
    assert len(ch3 | ch2 | oh) == 3
    assert p.class_count == 6
    assert p.class_count == len(set(p.classes.tolist()))
    assert p.topological_class_count == len(set(p.topological_classes.tolist()))


def test_diastereotopic_protons_differ_only_in_chemical_classes():
    """Common practice: the CH2 protons of butan-2-ol (next to a stereocentre) are
    diastereotopic: topologically equivalent, chemically not."""
    p = nmrpred.predict("CC(O)CC")
    ch2 = [i for i in range(p.atom_count) if p.attached_to[i] == 3]
    assert len(ch2) == 2
    assert p.topological_classes[ch2[0]] == p.topological_classes[ch2[1]]
    assert p.classes[ch2[0]] != p.classes[ch2[1]]


@pytest.mark.parametrize("smiles", ["CC(C)(C)C", "c1ccccc1", "Cc1ccccc1", "Cc1ccc(C)cc1", "OC(=O)CC(O)(CC(=O)O)C(=O)O",
                                    "CCN(CC)CC", "C1CCC2CCCCC2C1"])
def test_topological_classes_match_rdkit_symmetry_classes(smiles):
    """Source: RDKit Chem.CanonicalRankAtoms(AddHs(mol), breakTies=False,
    includeChirality=False): atoms with equal rank are symmetry-equivalent."""
    p = nmrpred.predict(smiles)
    mol_h = rdkit_with_h(smiles)
    ranks = list(Chem.CanonicalRankAtoms(mol_h, breakTies=False, includeChirality=False))
    mapping = map_to_rdkit(p, mol_h)
    ours = partition([int(c) for c in p.topological_classes])
    theirs = partition([ranks[mapping[i]] for i in range(p.atom_count)])
    assert ours == theirs


def test_atoms_in_one_topological_class_share_their_hose_code():
    """Common practice: a HOSE code depends only on the atom's surroundings."""
    p = nmrpred.predict("CC(C)Cc1ccc(cc1)C(C)C(=O)O")
    by_class = {}
    for cls, code in zip(p.topological_classes.tolist(), p.hose):
        by_class.setdefault(cls, set()).add(code)
    assert all(len(codes) == 1 for codes in by_class.values())


def test_spheres_change_the_hose_codes_and_are_range_checked():
    small = nmrpred.predict("CCCCCCO", spheres=1)
    large = nmrpred.predict("CCCCCCO", spheres=nmrpred.MAX_HOSE_SPHERES)
    assert small.hose != large.hose
    assert nmrpred.predict("CCCCCCO").hose == nmrpred.predict("CCCCCCO", spheres=nmrpred.DEFAULT_HOSE_SPHERES).hose
    for bad in (0, -1, nmrpred.MAX_HOSE_SPHERES + 1):
        with pytest.raises(nmrpred.ArgumentError) as info:
            nmrpred.predict("CCO", spheres=bad)
        assert "spheres" in info.value.message
        assert isinstance(info.value, ValueError)
        assert info.value.code == 1


def test_isotopes_and_charges_follow_the_smiles_notation():
    """OpenSMILES 3.1.4 (isotopes) and 3.1.6 (charges)."""
    p = nmrpred.predict("[13CH3][N+](C)(C)C")
    assert p.isotopes[0] == 13
    assert p.charges[1] == 1
    assert int(np.sum(p.charges)) == 1
    d = nmrpred.predict("[2H]C([2H])([2H])O")
    deuterium = [i for i in range(d.atom_count) if d.atomic_numbers[i] == 1 and d.isotopes[i] == 2]
    assert len(deuterium) == 3
    assert all(d.attached_to[i] == 0 for i in deuterium)


# ------------------------------------------------------------ other formats


def test_mol_block_written_by_rdkit_reads_like_the_smiles():
    mol = Chem.MolFromSmiles("OCC(N)=O")
    mol.SetProp("_Name", "glycolamide")
    block = Chem.MolToMolBlock(mol)  # source: RDKit MDL writer
    from_smiles = nmrpred.predict("OCC(N)=O")
    for fmt in ("mol", "auto"):
        p = nmrpred.predict(block, format=fmt)
        assert p.title == "glycolamide"
        assert p.atom_count == from_smiles.atom_count
        assert list(p.atomic_numbers) == list(from_smiles.atomic_numbers)
        assert partition(p.classes.tolist()) == partition(from_smiles.classes.tolist())


def test_sdf_with_two_records_gives_two_predictions(tmp_path):
    path = tmp_path / "two.sdf"
    writer = Chem.SDWriter(str(path))  # source: RDKit SDF writer
    for smi, name in (("CCO", "ethanol"), ("c1ccncc1", "pyridine")):
        m = Chem.MolFromSmiles(smi)
        m.SetProp("_Name", name)
        writer.write(m)
    writer.close()
    items = nmrpred.predict_all(path.read_text(), format="sdf")
    assert [type(i) for i in items] == [nmrpred.Prediction, nmrpred.Prediction]
    assert [i.title for i in items] == ["ethanol", "pyridine"]
    assert [i.record for i in items] == [0, 1]
    assert items[1].atom_count == rdkit_with_h("c1ccncc1").GetNumAtoms()
    with pytest.raises(nmrpred.InputError, match="2 records"):
        nmrpred.predict(path.read_text())


# ------------------------------------------------------------------ errors


def test_a_bad_record_keeps_its_place_in_a_batch():
    items = nmrpred.predict_all("CC\nC1CC\nc1ccccc1\n", format="smiles")
    assert len(items) == 3
    assert isinstance(items[0], nmrpred.Prediction)
    assert isinstance(items[1], nmrpred.RecordError)
    assert isinstance(items[2], nmrpred.Prediction)
    err = items[1]
    assert err.record == 1
    assert err.code == 2  # NMR_ERR_INPUT
    assert err.message.strip()
    assert isinstance(err.exception(), nmrpred.InputError)
    assert items[2].record == 2
    rec = json.loads(err.to_json())
    assert rec["record"] == 1
    assert rec["error"]["code"] == 2
    assert rec["error"]["name"] == "NMR_ERR_INPUT"
    assert rec["error"]["message"] == err.message


@pytest.mark.parametrize("text", ["", "   \n\n", "C1CC", "C[Qz]C"])
def test_predict_refuses_unusable_text_with_a_message(text):
    with pytest.raises(nmrpred.InputError) as info:
        nmrpred.predict(text, format="smiles")
    assert isinstance(info.value, ValueError)
    assert isinstance(info.value, nmrpred.Error)
    assert info.value.message.strip()
    assert str(info.value) == info.value.message


def test_predict_refuses_more_than_one_record():
    with pytest.raises(nmrpred.InputError, match="predict_all"):
        nmrpred.predict("CC\nCCC\n")


def test_unknown_format_is_an_argument_error():
    with pytest.raises(nmrpred.ArgumentError) as info:
        nmrpred.predict("CCO", format="pdb-please")
    assert info.value.message.strip()


def test_text_must_be_a_string():
    with pytest.raises(TypeError):
        nmrpred.predict(b"CCO")
    with pytest.raises(TypeError):
        nmrpred.predict_all(None)


def test_predict_all_of_empty_text_is_an_empty_list():
    assert nmrpred.predict_all("") == []


def test_exception_hierarchy():
    assert issubclass(nmrpred.InputError, nmrpred.Error) and issubclass(nmrpred.InputError, ValueError)
    assert issubclass(nmrpred.ArgumentError, nmrpred.Error) and issubclass(nmrpred.ArgumentError, ValueError)
    for cls in (nmrpred.UnsupportedError, nmrpred.TablesError, nmrpred.InternalError):
        assert issubclass(cls, nmrpred.Error)
        assert not issubclass(cls, ValueError)
    e = nmrpred.TablesError("table x: bad row")
    assert e.message == "table x: bad row" and e.code == 4


# -------------------------------------------------------------------- JSON


def test_json_matches_the_arrays():
    p = nmrpred.predict("[13CH3]C(=O)[O-] acetate")
    rec = json.loads(p.to_json())
    assert rec["record"] == 0
    assert rec["title"] == "acetate"
    assert rec["counts"] == {"atoms": p.atom_count, "heavy_atoms": p.heavy_atom_count,
                             "classes": p.class_count, "topological_classes": p.topological_class_count}
    assert rec["warnings"] == p.warnings
    assert len(rec["atoms"]) == p.atom_count
    for i, atom in enumerate(rec["atoms"]):
        assert atom["index"] == i
        assert atom["element"] == p.elements[i]
        assert atom["isotope"] == (int(p.isotopes[i]) or None)
        assert atom["charge"] == p.charges[i]
        assert atom["attached_to"] == (None if p.attached_to[i] < 0 else int(p.attached_to[i]))
        assert atom["class"] == p.classes[i]
        assert atom["topological_class"] == p.topological_classes[i]
        assert atom["hose"] == p.hose[i]
    assert "\n" not in p.to_json()
    assert json.loads(p.to_json(indent=2)) == rec


# ------------------------------------------------------------------ shifts

# Demo data (invented values, not published shifts): a user record for toluene.
DEMO_TOLUENE = ("id\tsmiles\tsolvent\tc13\th1\tsource\n"
                "demo-user-toluene\tCc1ccccc1\tCDCl3\t0=10.0;1=20.0;2,6=30.0;3,5=40.0;4=50.0\t-\tdemo data\n")
DEMO_TOLUENE_PPM = {0: 10.0, 1: 20.0, 2: 30.0, 6: 30.0, 3: 40.0, 5: 40.0, 4: 50.0}


def table_record(record_id):
    """A row of tables/reference/*.tsv read as plain text: {column: field}."""
    for path in sorted((REPO_ROOT / "tables" / "reference").glob("*.tsv")):
        lines = [line for line in path.read_text().splitlines() if line and not line.startswith("#")]
        header = lines[0].split("\t")
        for line in lines[1:]:
            row = dict(zip(header, line.split("\t")))
            if row["id"] == record_id:
                row["file"] = f"reference/{path.name}"
                return row
    raise AssertionError(f"no record {record_id}")


def c13_of_record(record_id):
    """Atom -> ppm from the c13 field (only the plain i,j=v form is needed here)."""
    out = {}
    for entry in table_record(record_id)["c13"].split(";"):
        atoms, value = entry.split("=")
        for a in atoms.split(","):
            out[int(a)] = float(value)
    return out


def test_shift_arrays_are_read_only_float64_with_nan_for_atoms_without_a_shift():
    p = nmrpred.predict("CC(=O)OCC")
    for name in ("shifts", "shift_uncertainties"):
        a = getattr(p, name)
        assert isinstance(a, np.ndarray) and a.dtype == np.float64 and a.shape == (p.atom_count,), name
        with pytest.raises(ValueError):
            a[0] = 1.0
    # Carbons have a 13C shift and protons a 1H shift; the oxygens have none.
    carbon = np.array([e in ("C", "H") for e in p.elements])
    assert not np.any(np.isnan(p.shifts[carbon])) and np.all(p.shift_uncertainties[carbon] > 0)
    assert np.all(np.isnan(p.shifts[~carbon])) and np.all(np.isnan(p.shift_uncertainties[~carbon]))
    assert len(p.shift_methods) == len(p.shift_references) == p.atom_count
    for name in ("exchangeable", "observed"):
        a = getattr(p, name)
        assert isinstance(a, np.ndarray) and a.dtype == np.bool_ and a.shape == (p.atom_count,), name
        with pytest.raises(ValueError):
            a[0] = True
    assert not np.any(p.exchangeable) and np.all(p.observed)  # ethyl acetate has no OH/NH
    for i in range(p.atom_count):
        if carbon[i]:
            assert isinstance(p.shift_methods[i], str) and p.shift_methods[i]
            assert all(isinstance(r, str) for r in p.shift_references[i])
        else:
            assert p.shift_methods[i] is None and p.shift_references[i] == []
    assert p.tables_version.startswith("builtin-")


def test_known_compound_is_looked_up_and_blind_mode_leaves_it_out():
    want = c13_of_record("toluene")  # GOTTLIEB-1997, Table 2 (from memory)
    p = nmrpred.predict("Cc1ccccc1")
    for atom, ppm in want.items():
        assert abs(p.shifts[atom] - ppm) <= 0.01, atom
        assert "toluene" in p.shift_references[atom]
    b = nmrpred.predict("Cc1ccccc1", blind=True)
    assert not any("toluene" in refs for refs in b.shift_references)
    assert not np.any(np.isnan(b.shifts[:7]))
    assert b.to_json() != p.to_json()


@pytest.mark.parametrize("smiles", ["Cc1ccc(C)cc1", "CC(C)(C)c1ccccc1", "CCOCC", "CC(O)CC", "OC(=O)CC(O)(CC(=O)O)C(=O)O",
                                    "[2H]C([2H])([2H])c1ccccc1", "C"])
def test_signals_group_equivalent_carbons_downfield_first(smiles):
    p = nmrpred.predict(smiles)
    mol_h = rdkit_with_h(smiles)
    rd_heavy = [a.GetIdx() for a in mol_h.GetAtoms() if a.GetAtomicNum() != 1]
    sig = p.signals["13C"]
    assert list(p.signals) == ["13C", "1H", "1H_exchanged"]
    assert [g["shift"] for g in sig] == sorted((g["shift"] for g in sig), reverse=True)
    carbons = [i for i, e in enumerate(p.elements) if e == "C"]
    assert sorted(i for g in sig for i in g["atoms"]) == carbons
    assert len(sig) == len({int(p.classes[i]) for i in carbons})
    for g in sig:
        assert g["atoms"] == sorted(g["atoms"])
        assert len({int(p.classes[i]) for i in g["atoms"]}) == 1
        assert {float(p.shifts[i]) for i in g["atoms"]} == {g["shift"]}
        assert {float(p.shift_uncertainties[i]) for i in g["atoms"]} == {g["shift_uncertainty"]}
        assert {p.shift_methods[i] for i in g["atoms"]} == {g["shift_method"]}
        # Protons on the carbon: RDKit's count of hydrogens that are not 2H.
        # Our heavy atoms keep their input order; RDKit also numbers the
        # bracket hydrogens ([2H]) written in the SMILES, so map by position.
        atom = mol_h.GetAtomWithIdx(rd_heavy[g["atoms"][0]])
        protons = sum(1 for n in atom.GetNeighbors() if n.GetAtomicNum() == 1 and n.GetIsotope() in (0, 1))
        assert g["attached_h"] == protons


def test_shift_json_matches_the_arrays():
    p = nmrpred.predict("CC(O)c1ccncc1")
    rec = json.loads(p.to_json())
    assert rec["tables_version"] == p.tables_version
    assert rec["signals"] == p.signals
    for i, atom in enumerate(rec["atoms"]):
        if np.isnan(p.shifts[i]):
            assert not any(k.startswith("shift") for k in atom)
        else:
            assert atom["shift"] == p.shifts[i]
            assert atom["shift_uncertainty"] == p.shift_uncertainties[i]
            assert atom["shift_method"] == p.shift_methods[i]
            assert atom["shift_references"] == p.shift_references[i]


def test_predict_shifts_false_gives_classes_and_codes_only():
    full = nmrpred.predict("CC(O)CC")
    bare = nmrpred.predict("CC(O)CC", predict_shifts=False)
    assert np.all(np.isnan(bare.shifts)) and np.all(np.isnan(bare.shift_uncertainties))
    assert bare.signals == {} and all(m is None for m in bare.shift_methods)
    assert list(bare.classes) == list(full.classes) and bare.hose == full.hose
    assert [type(i) for i in nmrpred.predict_all("CC\nCCO\n", predict_shifts=False)] == [nmrpred.Prediction] * 2


def test_context_with_built_in_tables_matches_the_module_functions():
    ctx = nmrpred.Context()
    assert ctx.tables_version == nmrpred.predict("C").tables_version
    assert ctx.predict("CCOC(=O)C").to_json() == nmrpred.predict("CCOC(=O)C").to_json()
    items = ctx.predict_all("CC\nC1CC\n", format="smiles", blind=True)
    assert isinstance(items[0], nmrpred.Prediction) and isinstance(items[1], nmrpred.RecordError)


def test_context_reads_a_tables_folder_and_names_it():
    from_dir = nmrpred.Context(REPO_ROOT / "tables")
    builtin = nmrpred.Context()
    assert from_dir.tables_version.startswith("dir-")
    assert from_dir.tables_version[len("dir-"):] == builtin.tables_version[len("builtin-"):]
    assert from_dir.predict("Cc1ccccc1").signals == builtin.predict("Cc1ccccc1").signals


@pytest.mark.parametrize("where", ["no/such/tables", "tests"])
def test_context_with_an_unusable_tables_folder_raises_tables_error(where):
    with pytest.raises(nmrpred.TablesError) as info:
        nmrpred.Context(str(REPO_ROOT / where))
    assert "SOURCES.md" in info.value.message
    assert info.value.code == 4 and not isinstance(info.value, ValueError)
    with pytest.raises(TypeError):
        nmrpred.Context(42)


def test_user_records_take_precedence_and_are_named():
    ctx = nmrpred.Context()
    before = ctx.tables_version
    ctx.add_reference(DEMO_TOLUENE, name="demo.tsv")
    assert ctx.tables_version.startswith(before + "+user-")
    p = ctx.predict("Cc1ccccc1")
    assert p.tables_version == ctx.tables_version
    for atom, ppm in DEMO_TOLUENE_PPM.items():
        assert abs(p.shifts[atom] - ppm) <= 0.01, atom
        assert p.shift_references[atom] == ["demo-user-toluene"]
    # Only this context changed.
    assert abs(nmrpred.predict("Cc1ccccc1").shifts[4] - c13_of_record("toluene")[4]) <= 0.01
    demo = [r for r in ctx.reference() if r["id"] == "demo-user-toluene"]
    assert demo == [{"id": "demo-user-toluene", "smiles": "Cc1ccccc1", "solvent": "CDCl3", "source": "demo data",
                     "file": "demo.tsv", "user": True,
                     "c13": [{"atoms": [0], "ppm": [10.0]}, {"atoms": [1], "ppm": [20.0]},
                             {"atoms": [2, 6], "ppm": [30.0]}, {"atoms": [3, 5], "ppm": [40.0]},
                             {"atoms": [4], "ppm": [50.0]}],
                     "h1": []}]


@pytest.mark.parametrize("text, part", [
    ("id\tsmiles\tsolvent\tc13\th1\tsource\ndemo-a\tCC\tCDCl3\t0=7.x\t-\tdemo\n", "demo.tsv:2"),
    ("id\tsmiles\tsolvent\tc13\th1\tsource\ndemo-a\tCC\tCDCl3\t0=7.0\t-\tdemo\ndemo-b\tCC\tCDCl3\n", "demo.tsv:3"),
    ("id\tsmiles\tsolvent\tc13\th1\tsource\n", "no records"),
    ("id\tsmiles\tsolvent\tc13\th1\tsource\ntoluene\tCc1ccccc1\tCDCl3\t0=7.0\t-\tdemo\n", "'toluene'"),
])
def test_bad_user_records_are_refused_with_their_line_and_change_nothing(text, part):
    ctx = nmrpred.Context()
    before = ctx.tables_version
    with pytest.raises(nmrpred.TablesError) as info:
        ctx.add_reference(text, name="demo.tsv")
    assert part in info.value.message
    assert ctx.tables_version == before
    with pytest.raises(TypeError):
        ctx.add_reference(text.encode())


def test_reference_lists_the_built_in_records_as_in_the_table_files():
    refs = nmrpred.Context().reference()
    assert len({r["id"] for r in refs}) == len(refs)
    toluene = next(r for r in refs if r["id"] == "toluene")
    row = table_record("toluene")
    assert {k: toluene[k] for k in ("smiles", "solvent", "source", "file")} == \
        {k: row[k] for k in ("smiles", "solvent", "source", "file")}
    assert toluene["user"] is False
    got = {a: ppm for entry in toluene["c13"] for a in entry["atoms"] for ppm in entry["ppm"]}
    assert got == c13_of_record("toluene")


def test_add_reference_while_other_threads_predict():
    """Every prediction sees either the tables before or after the addition,
    never a mixture, and none fails (the Context's own lock)."""
    ctx = nmrpred.Context()
    before = ctx.tables_version
    results = []
    lock = threading.Lock()

    def work():
        for _ in range(5):
            p = ctx.predict("Cc1ccccc1")
            with lock:
                results.append(p)

    threads = [threading.Thread(target=work) for _ in range(3)]
    for t in threads:
        t.start()
    ctx.add_reference(DEMO_TOLUENE)
    for t in threads:
        t.join()
    after = ctx.tables_version
    assert len(results) == 15
    for p in results:
        assert p.tables_version in (before, after)
        user = p.tables_version == after
        assert all((refs == ["demo-user-toluene"]) == user for refs in p.shift_references[:7])


# ----------------------------------------------------------------- threads


def test_parallel_calls_give_the_sequential_results():
    texts = ["CC(O)CC", "c1ccc2ccccc2c1", "OC(=O)C(N)Cc1ccccc1", "CCOC(=O)C"] * 4
    expected = [nmrpred.predict(t) for t in texts]
    got = [None] * len(texts)

    def work(k):
        got[k] = nmrpred.predict(texts[k])

    threads = [threading.Thread(target=work, args=(k,)) for k in range(len(texts))]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    for e, g in zip(expected, got):
        assert g is not None
        assert g.to_json() == e.to_json()


# ---------------------------------------------------------- 1H and solvents


def proton_signal_by_heavy_atom(p):
    return {int(p.attached_to[g["atoms"][0]]): g for g in p.signals["1H"]}


def test_ethanol_proton_signals_in_cdcl3():
    """Common practice: CH3 3, CH2 2, OH 1 (exchangeable)."""
    p = nmrpred.predict("CCO")
    sig = p.signals["1H"]
    assert [g["shift"] for g in sig] == sorted((g["shift"] for g in sig), reverse=True)
    by_heavy = proton_signal_by_heavy_atom(p)
    assert {a: g["count"] for a, g in by_heavy.items()} == {0: 3, 1: 2, 2: 1}
    assert {a: g["exchangeable"] for a, g in by_heavy.items()} == {0: False, 1: False, 2: True}
    assert p.signals["1H_exchanged"] == []
    protons = [i for i, e in enumerate(p.elements) if e == "H"]
    assert not np.any(np.isnan(p.shifts[protons]))
    assert [int(i) for i in np.flatnonzero(p.exchangeable)] == [8]
    assert np.all(p.observed)
    assert p.solvent["name"] == "CDCl3"
    # FULMER-2010 (from memory)
    assert p.solvent["residual_1h"] == pytest.approx([7.26], abs=0.005)
    assert p.solvent["residual_13c"] == pytest.approx([77.16], abs=0.005)
    assert p.solvent["water_1h"] == pytest.approx(1.56, abs=0.005)
    assert json.loads(p.to_json())["solvent"] == p.solvent
    assert json.loads(p.to_json())["signals"] == p.signals


@pytest.mark.parametrize("solvent", ["D2O", "d2o", "CD3OD", "methanol-d4"])
def test_in_exchanging_solvents_the_oh_signal_is_listed_apart(solvent):
    """Common practice: the OH proton exchanges for deuterium and is not seen."""
    p = nmrpred.predict("CCO", solvent=solvent)
    by_heavy = proton_signal_by_heavy_atom(p)
    assert {a: g["count"] for a, g in by_heavy.items()} == {0: 3, 1: 2}
    [oh] = p.signals["1H_exchanged"]
    assert oh["atoms"] == [8] and oh["count"] == 1 and oh["exchangeable"] and not oh["observed"]
    assert bool(p.exchangeable[8]) and not bool(p.observed[8])
    assert not np.isnan(p.shifts[8])
    assert p.solvent["name"] in ("D2O", "CD3OD")


def test_integrals_add_up_to_the_proton_count_rdkit_gives():
    for smiles in ("CC(=O)Nc1ccc(O)cc1", "CCN(CC)CC", "OC(=O)CC(O)(CC(=O)O)C(=O)O", "c1ccncc1"):
        p = nmrpred.predict(smiles)
        protons = sum(a.GetTotalNumHs() for a in Chem.MolFromSmiles(smiles).GetAtoms())  # source: RDKit
        assert sum(g["count"] for g in p.signals["1H"]) == protons, smiles
        classes = {int(p.classes[i]) for g in p.signals["1H"] for i in g["atoms"]}
        assert len(classes) == len(p.signals["1H"]), smiles


def test_deuterated_positions_give_no_proton_signal():
    p = nmrpred.predict("[2H]C([2H])([2H])CO")
    deuterium = [i for i in range(p.atom_count) if p.isotopes[i] == 2]
    assert len(deuterium) == 3
    assert np.all(np.isnan(p.shifts[deuterium]))
    assert not set(deuterium) & {i for g in p.signals["1H"] for i in g["atoms"]}
    assert sorted(g["count"] for g in p.signals["1H"]) == [1, 2]


def test_diastereotopic_protons_are_two_signals():
    """Common practice: the CH2 protons of butan-2-ol are diastereotopic."""
    p = nmrpred.predict("CC(O)CC")
    ch2 = [i for i in range(p.atom_count) if p.attached_to[i] == 3]
    holding = [[k for k, g in enumerate(p.signals["1H"]) if h in g["atoms"]] for h in ch2]
    assert len(holding[0]) == 1 and len(holding[1]) == 1 and holding[0] != holding[1]
    assert sum(g["count"] for g in p.signals["1H"]) == 10


def test_unknown_solvent_is_an_argument_error_naming_the_known_ones():
    for call in (lambda: nmrpred.predict("CCO", solvent="chloroform-h"),
                 lambda: nmrpred.predict_all("CCO\nCC\n", solvent="chloroform-h"),
                 lambda: nmrpred.Context().predict("CCO", solvent="chloroform-h")):
        with pytest.raises(nmrpred.ArgumentError) as info:
            call()
        assert "chloroform-h" in info.value.message
        assert "CDCl3" in info.value.message and "D2O" in info.value.message
    with pytest.raises(TypeError):
        nmrpred.predict("CCO", solvent=None)


def test_predict_h1_false_gives_13c_only():
    p = nmrpred.predict("CCO", predict_h1=False)
    assert list(p.signals) == ["13C"]
    assert np.all(np.isnan(p.shifts[3:])) and not np.any(np.isnan(p.shifts[:2]))


def test_solvents_lists_the_table():
    """Read against tables/solvents.tsv as plain text."""
    rows = []
    lines = [line for line in (REPO_ROOT / "tables" / "solvents.tsv").read_text().splitlines()
             if line and not line.startswith("#")]
    header = lines[0].split("\t")
    for line in lines[1:]:
        rows.append(dict(zip(header, line.split("\t"))))
    got = nmrpred.solvents()
    assert [s["name"] for s in got] == [r["name"] for r in rows]
    for s, r in zip(got, rows):
        assert s["id"] == r["id"]
        assert s["residual_1h"] == [float(v) for v in r["h1_residual_ppm"].split(";")]
        want_13c = [] if r["c13_ppm"] == "-" else [float(v) for v in r["c13_ppm"].split(";")]
        assert s["residual_13c"] == want_13c
        assert s["water_1h"] == float(r["water_h1_ppm"])
        assert [d["shift"] for d in s["residual_1h_detail"]] == s["residual_1h"]
    d2o = next(s for s in got if s["name"] == "D2O")
    assert d2o["exchanges_labile_protons"] is True
    assert nmrpred.Context().solvents() == got
    # Every listed name and alias is accepted as solvent=.
    for s in got:
        for name in [s["name"]] + s["aliases"]:
            assert nmrpred.predict("C", solvent=name).solvent["name"] == s["name"]
