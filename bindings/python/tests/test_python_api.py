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
