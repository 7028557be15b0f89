"""The C ABI (libnmrpred.so) loaded through ctypes, as another runtime's FFI
would load it: only the declarations in capi/include/nmrpred.h are used.

NMRPRED_BUILD_DIR (default <repo>/build) says where the build is; the library
is <build>/lib/libnmrpred.so.

References outside the project:
  * RDKit (Debian python3-rdkit) Chem.AddHs: atom counts and the hydrogens on
    each carbon.
  * Common practice (any introductory NMR text): ethanol has three proton sets
    (CH3, CH2, OH) and two carbon environments; benzene has one of each;
    toluene has five 13C signals; equivalent carbons resonate together.
  * GOTTLIEB-1997 (tables/SOURCES.md), Table 2: 13C of toluene in CDCl3 (from
    memory), the built-in record "toluene" of tables/reference/aromatic.tsv.
  * Common practice for 1H: a signal's integral is its number of protons, so
    the integrals add up to the molecule's proton count (RDKit counts the
    hydrogens); protons on O, N and S exchange and vanish in D2O or CD3OD;
    2H gives no 1H signal.
  * The exported-symbol check reads the dynamic symbol table with binutils' nm.
Records with "demo-" ids are demo data with invented values, not published.
"""

import ctypes
import json
import math
import os
import pathlib
import re
import shutil
import subprocess

import pytest
from rdkit import Chem

REPO_ROOT = pathlib.Path(__file__).resolve().parents[3]
BUILD_DIR = pathlib.Path(os.environ.get("NMRPRED_BUILD_DIR", REPO_ROOT / "build")).resolve()
LIB_PATH = BUILD_DIR / "lib" / "libnmrpred.so"
HEADER = REPO_ROOT / "capi" / "include" / "nmrpred.h"

NMR_OK, NMR_ERR_ARGUMENT, NMR_ERR_INPUT, NMR_ERR_UNSUPPORTED, NMR_ERR_TABLES = 0, 1, 2, 3, 4
NMR_OPT_HOSE_SPHERES, NMR_OPT_BLIND, NMR_OPT_PREDICT_SHIFTS, NMR_OPT_PREDICT_H1, NMR_OPT_SOLVENT = 3, 4, 5, 6, 7
NMR_NUCLEUS_1H, NMR_NUCLEUS_13C = 1, 13

# Demo data (invented values, not published shifts).
DEMO_TOLUENE = ("id\tsmiles\tsolvent\tc13\th1\tsource\n"
                "demo-user-toluene\tCc1ccccc1\tCDCl3\t0=10.0;1=20.0;2,6=30.0;3,5=40.0;4=50.0\t-\tdemo data\n")

c_size_p = ctypes.POINTER(ctypes.c_size_t)
c_int_p = ctypes.POINTER(ctypes.c_int)
c_double_p = ctypes.POINTER(ctypes.c_double)
c_char_pp = ctypes.POINTER(ctypes.c_char_p)
vp = ctypes.c_void_p
vpp = ctypes.POINTER(ctypes.c_void_p)

# name: (restype, argtypes). Strings handed to us through char** stay c_void_p
# so that we can give the same pointer back to nmr_string_free.
SIGNATURES = {
    "nmr_version_number": (ctypes.c_int, []),
    "nmr_version_string": (ctypes.c_char_p, []),
    "nmr_status_string": (ctypes.c_char_p, [ctypes.c_int]),
    "nmr_context_new": (ctypes.c_int, [vpp, ctypes.c_char_p]),
    "nmr_context_free": (None, [vp]),
    "nmr_context_last_error": (ctypes.c_char_p, [vp]),
    "nmr_context_tables_version": (ctypes.c_char_p, [vp]),
    "nmr_context_add_reference": (ctypes.c_int, [vp, ctypes.c_char_p]),
    "nmr_context_set_option_double": (ctypes.c_int, [vp, ctypes.c_int, ctypes.c_double]),
    "nmr_context_get_option_double": (ctypes.c_int, [vp, ctypes.c_int, ctypes.POINTER(ctypes.c_double)]),
    "nmr_context_set_option_string": (ctypes.c_int, [vp, ctypes.c_int, ctypes.c_char_p]),
    "nmr_context_get_option_string": (ctypes.c_int, [vp, ctypes.c_int, c_char_pp]),
    "nmr_predict": (ctypes.c_int, [vpp, vp, ctypes.c_char_p, ctypes.c_char_p]),
    "nmr_result_free": (None, [vp]),
    "nmr_result_tables_version": (ctypes.c_char_p, [vp]),
    "nmr_result_record_count": (ctypes.c_size_t, [vp]),
    "nmr_result_failed_count": (ctypes.c_size_t, [vp]),
    "nmr_result_record_status": (ctypes.c_int, [vp, ctypes.c_size_t]),
    "nmr_result_record_error": (ctypes.c_char_p, [vp, ctypes.c_size_t]),
    "nmr_result_record_title": (ctypes.c_char_p, [vp, ctypes.c_size_t]),
    "nmr_result_warning_count": (ctypes.c_size_t, [vp, ctypes.c_size_t]),
    "nmr_result_warning": (ctypes.c_char_p, [vp, ctypes.c_size_t, ctypes.c_size_t]),
    "nmr_result_atom_count": (ctypes.c_size_t, [vp, ctypes.c_size_t]),
    "nmr_result_heavy_atom_count": (ctypes.c_size_t, [vp, ctypes.c_size_t]),
    "nmr_result_class_count": (ctypes.c_size_t, [vp, ctypes.c_size_t]),
    "nmr_result_topological_class_count": (ctypes.c_size_t, [vp, ctypes.c_size_t]),
    "nmr_result_atom_element": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_size_t, c_int_p, c_char_pp]),
    "nmr_result_atom_isotope": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_size_t, c_int_p]),
    "nmr_result_atom_charge": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_size_t, c_int_p]),
    "nmr_result_atom_attached_to": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_size_t,
                                                   ctypes.POINTER(ctypes.c_ssize_t)]),
    "nmr_result_atom_class": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_size_t, c_size_p]),
    "nmr_result_atom_topological_class": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_size_t, c_size_p]),
    "nmr_result_atom_hose": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_size_t, c_char_pp]),
    "nmr_result_atom_shift": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_size_t, c_double_p, c_double_p]),
    "nmr_result_atom_shift_method": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_size_t, c_char_pp]),
    "nmr_result_atom_shift_reference_count": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_size_t, c_size_p]),
    "nmr_result_atom_shift_reference": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_size_t, ctypes.c_size_t,
                                                       c_char_pp]),
    "nmr_result_atom_exchangeable": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_size_t, c_int_p, c_int_p]),
    "nmr_result_solvent": (ctypes.c_char_p, [vp, ctypes.c_size_t]),
    "nmr_result_signal_count": (ctypes.c_size_t, [vp, ctypes.c_size_t, ctypes.c_int]),
    "nmr_result_signal_shift": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_int, ctypes.c_size_t, c_double_p,
                                               c_double_p]),
    "nmr_result_signal_attached_h": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_int, ctypes.c_size_t, c_int_p]),
    "nmr_result_signal_method": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_int, ctypes.c_size_t, c_char_pp]),
    "nmr_result_signal_integral": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_int, ctypes.c_size_t, c_int_p]),
    "nmr_result_signal_exchangeable": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_int, ctypes.c_size_t,
                                                      c_int_p]),
    "nmr_result_signal_atom_count": (ctypes.c_size_t, [vp, ctypes.c_size_t, ctypes.c_int, ctypes.c_size_t]),
    "nmr_result_signal_atom": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_int, ctypes.c_size_t, ctypes.c_size_t,
                                              c_size_p]),
    "nmr_result_to_json": (ctypes.c_int, [vp, vpp]),
    "nmr_result_record_to_json": (ctypes.c_int, [vp, ctypes.c_size_t, vpp]),
    "nmr_string_free": (None, [vp]),
}


@pytest.fixture(scope="module")
def lib():
    if not LIB_PATH.is_file():
        pytest.fail(f"{LIB_PATH} does not exist: build the project first (set NMRPRED_BUILD_DIR)")
    dll = ctypes.CDLL(str(LIB_PATH))
    for name, (res, args) in SIGNATURES.items():
        f = getattr(dll, name)
        f.restype = res
        f.argtypes = args
    return dll


@pytest.fixture
def ctx(lib):
    handle = ctypes.c_void_p()
    assert lib.nmr_context_new(ctypes.byref(handle), None) == NMR_OK
    assert handle.value
    yield handle
    lib.nmr_context_free(handle)


def predict(lib, ctx, text, fmt=None):
    res = ctypes.c_void_p()
    rc = lib.nmr_predict(ctypes.byref(res), ctx, fmt.encode() if fmt else None, text.encode())
    return rc, res


def last_error(lib, ctx):
    return lib.nmr_context_last_error(ctx).decode()


def header_functions():
    return set(re.findall(r"NMR_API\s+[^;(]*?\b(nmr_\w+)\s*\(", HEADER.read_text()))


def test_every_header_function_has_a_signature_here():
    assert header_functions() == set(SIGNATURES)


def test_only_the_header_functions_are_exported():
    nm = shutil.which("nm")
    if nm is None:
        pytest.skip("binutils' nm is not installed")
    if not LIB_PATH.is_file():
        pytest.fail(f"{LIB_PATH} does not exist")
    out = subprocess.run([nm, "-D", "--defined-only", str(LIB_PATH)], capture_output=True, text=True, check=True)
    exported = {line.split()[-1] for line in out.stdout.splitlines() if line.split()[1:2] and line.split()[1] in "TDBRVWiu"}
    assert exported == header_functions()


def test_versions(lib):
    text = (REPO_ROOT / "CMakeLists.txt").read_text()
    m = re.search(r"project\(\s*nmrpred\s+VERSION\s+([0-9]+)\.([0-9]+)\.([0-9]+)", text)
    major, minor, patch = (int(g) for g in m.groups())
    assert lib.nmr_version_string().decode() == f"{major}.{minor}.{patch}"
    assert lib.nmr_version_number() == major * 10000 + minor * 100 + patch
    header = HEADER.read_text()
    for part, value in (("MAJOR", major), ("MINOR", minor), ("PATCH", patch)):
        assert re.search(rf"#define NMR_VERSION_{part} {value}\b", header), part
    assert LIB_PATH.resolve().name.startswith(f"libnmrpred.so.{major}")


def test_status_strings(lib):
    texts = [lib.nmr_status_string(c).decode() for c in range(0, 7)]
    assert all(texts) and len(set(texts)) == 7
    assert lib.nmr_status_string(1000).decode()


def test_null_frees_and_null_handles(lib):
    lib.nmr_context_free(None)
    lib.nmr_result_free(None)
    lib.nmr_string_free(None)
    assert lib.nmr_context_last_error(None).decode()
    assert lib.nmr_result_record_count(None) == 0
    assert lib.nmr_result_record_status(None, 0) == NMR_ERR_ARGUMENT
    assert lib.nmr_context_new(None, None) == NMR_ERR_ARGUMENT


def test_context_options_and_errors(lib, ctx):
    assert lib.nmr_context_tables_version(ctx).decode()
    value = ctypes.c_double()
    assert lib.nmr_context_get_option_double(ctx, NMR_OPT_HOSE_SPHERES, ctypes.byref(value)) == NMR_OK
    assert value.value == 4
    assert lib.nmr_context_set_option_double(ctx, 4711, 1.0) == NMR_ERR_UNSUPPORTED
    assert "4711" in last_error(lib, ctx)
    assert lib.nmr_context_set_option_double(ctx, NMR_OPT_HOSE_SPHERES, 99.0) == NMR_ERR_ARGUMENT
    assert "NMR_OPT_HOSE_SPHERES" in last_error(lib, ctx)
    assert lib.nmr_context_set_option_double(ctx, NMR_OPT_HOSE_SPHERES, 2.0) == NMR_OK
    assert last_error(lib, ctx) == ""


def test_context_with_a_missing_tables_dir_reports_why(lib):
    handle = ctypes.c_void_p()
    rc = lib.nmr_context_new(ctypes.byref(handle), b"some/tables")
    try:
        assert rc == NMR_ERR_TABLES
        assert handle.value, "a failed nmr_context_new still hands back a context"
        assert "some/tables" in last_error(lib, handle)
        assert lib.nmr_context_tables_version(handle).decode() == ""
        rc, res = predict(lib, handle, "CCO")
        assert rc == NMR_ERR_TABLES and not res.value
        assert last_error(lib, handle)
    finally:
        lib.nmr_context_free(handle)


def test_context_with_the_project_tables_dir_has_the_built_in_data(lib, ctx):
    handle = ctypes.c_void_p()
    assert lib.nmr_context_new(ctypes.byref(handle), str(REPO_ROOT / "tables").encode()) == NMR_OK, \
        last_error(lib, handle)
    try:
        from_dir = lib.nmr_context_tables_version(handle).decode()
        builtin = lib.nmr_context_tables_version(ctx).decode()
        assert from_dir.startswith("dir-") and builtin.startswith("builtin-")
        assert from_dir.split("-", 1)[1] == builtin.split("-", 1)[1]
    finally:
        lib.nmr_context_free(handle)


def test_switch_options(lib, ctx):
    value = ctypes.c_double()
    for key, default in ((NMR_OPT_BLIND, 0.0), (NMR_OPT_PREDICT_SHIFTS, 1.0)):
        assert lib.nmr_context_get_option_double(ctx, key, ctypes.byref(value)) == NMR_OK
        assert value.value == default
        for bad in (0.5, 2.0, -1.0, float("nan")):
            assert lib.nmr_context_set_option_double(ctx, key, bad) == NMR_ERR_ARGUMENT
            assert last_error(lib, ctx)
        assert lib.nmr_context_set_option_double(ctx, key, 1.0 - default) == NMR_OK
        assert lib.nmr_context_get_option_double(ctx, key, ctypes.byref(value)) == NMR_OK
        assert value.value == 1.0 - default


def atom_props(lib, res, rec, i):
    z = ctypes.c_int()
    sym = ctypes.c_char_p()
    assert lib.nmr_result_atom_element(res, rec, i, ctypes.byref(z), ctypes.byref(sym)) == NMR_OK
    iso = ctypes.c_int(-1)
    assert lib.nmr_result_atom_isotope(res, rec, i, ctypes.byref(iso)) == NMR_OK
    charge = ctypes.c_int(-9)
    assert lib.nmr_result_atom_charge(res, rec, i, ctypes.byref(charge)) == NMR_OK
    heavy = ctypes.c_ssize_t()
    assert lib.nmr_result_atom_attached_to(res, rec, i, ctypes.byref(heavy)) == NMR_OK
    cls = ctypes.c_size_t()
    assert lib.nmr_result_atom_class(res, rec, i, ctypes.byref(cls)) == NMR_OK
    topo = ctypes.c_size_t()
    assert lib.nmr_result_atom_topological_class(res, rec, i, ctypes.byref(topo)) == NMR_OK
    hose = ctypes.c_char_p()
    assert lib.nmr_result_atom_hose(res, rec, i, ctypes.byref(hose)) == NMR_OK
    return {"z": z.value, "symbol": sym.value.decode(), "isotope": iso.value, "charge": charge.value,
            "attached_to": heavy.value, "class": cls.value, "topological_class": topo.value,
            "hose": hose.value.decode()}


def test_ethanol(lib, ctx):
    rc, res = predict(lib, ctx, "CCO ethanol")
    assert rc == NMR_OK, last_error(lib, ctx)
    try:
        assert lib.nmr_result_record_count(res) == 1
        assert lib.nmr_result_record_status(res, 0) == NMR_OK
        assert lib.nmr_result_record_title(res, 0).decode() == "ethanol"
        n = lib.nmr_result_atom_count(res, 0)
        mol_h = Chem.AddHs(Chem.MolFromSmiles("CCO"))
        assert n == mol_h.GetNumAtoms()
        assert lib.nmr_result_heavy_atom_count(res, 0) == mol_h.GetNumHeavyAtoms()
        atoms = [atom_props(lib, res, 0, i) for i in range(n)]
        assert [a["symbol"] for a in atoms[:3]] == ["C", "C", "O"]
        assert [a["z"] for a in atoms[:3]] == [6, 6, 8]
        assert all(a["symbol"] == "H" and a["attached_to"] in (0, 1, 2) for a in atoms[3:])
        assert all(a["attached_to"] == -1 for a in atoms[:3])
        # Proton sets: one class per heavy atom's hydrogens, three in all.
        h_classes = {a["attached_to"]: set() for a in atoms[3:]}
        for a in atoms[3:]:
            h_classes[a["attached_to"]].add(a["class"])
        assert all(len(s) == 1 for s in h_classes.values())
        assert len(set().union(*h_classes.values())) == 3
        assert atoms[0]["class"] != atoms[1]["class"]
        assert lib.nmr_result_class_count(res, 0) == 6
        assert all(a["hose"] for a in atoms)

        out = ctypes.c_void_p()
        assert lib.nmr_result_to_json(res, ctypes.byref(out)) == NMR_OK
        doc = json.loads(ctypes.string_at(out.value).decode())
        lib.nmr_string_free(out)
        assert len(doc) == 1 and doc[0]["title"] == "ethanol"
        assert [a["hose"] for a in doc[0]["atoms"]] == [a["hose"] for a in atoms]
        assert [a["class"] for a in doc[0]["atoms"]] == [a["class"] for a in atoms]
    finally:
        lib.nmr_result_free(res)


def atom_shift(lib, res, rec, i):
    ppm, unc = ctypes.c_double(), ctypes.c_double()
    assert lib.nmr_result_atom_shift(res, rec, i, ctypes.byref(ppm), ctypes.byref(unc)) == NMR_OK
    method = ctypes.c_char_p()
    assert lib.nmr_result_atom_shift_method(res, rec, i, ctypes.byref(method)) == NMR_OK
    count = ctypes.c_size_t()
    assert lib.nmr_result_atom_shift_reference_count(res, rec, i, ctypes.byref(count)) == NMR_OK
    refs = []
    for k in range(count.value):
        ref = ctypes.c_char_p()
        assert lib.nmr_result_atom_shift_reference(res, rec, i, k, ctypes.byref(ref)) == NMR_OK
        refs.append(ref.value.decode())
    ref = ctypes.c_char_p()
    assert lib.nmr_result_atom_shift_reference(res, rec, i, count.value, ctypes.byref(ref)) == NMR_ERR_ARGUMENT
    return {"ppm": ppm.value, "uncertainty": unc.value, "method": method.value.decode(), "references": refs}


def signals(lib, res, rec, nucleus=NMR_NUCLEUS_13C):
    """The signals of one nucleus through the accessors, with the keys of the JSON."""
    out = []
    for k in range(lib.nmr_result_signal_count(res, rec, nucleus)):
        ppm, unc = ctypes.c_double(), ctypes.c_double()
        assert lib.nmr_result_signal_shift(res, rec, nucleus, k, ctypes.byref(ppm), ctypes.byref(unc)) == NMR_OK
        h = ctypes.c_int()
        assert lib.nmr_result_signal_attached_h(res, rec, nucleus, k, ctypes.byref(h)) == NMR_OK
        method = ctypes.c_char_p()
        assert lib.nmr_result_signal_method(res, rec, nucleus, k, ctypes.byref(method)) == NMR_OK
        count, exch = ctypes.c_int(), ctypes.c_int()
        assert lib.nmr_result_signal_integral(res, rec, nucleus, k, ctypes.byref(count)) == NMR_OK
        assert lib.nmr_result_signal_exchangeable(res, rec, nucleus, k, ctypes.byref(exch)) == NMR_OK
        atoms = []
        for i in range(lib.nmr_result_signal_atom_count(res, rec, nucleus, k)):
            a = ctypes.c_size_t()
            assert lib.nmr_result_signal_atom(res, rec, nucleus, k, i, ctypes.byref(a)) == NMR_OK
            atoms.append(a.value)
        assert count.value == len(atoms)
        if nucleus == NMR_NUCLEUS_13C:
            assert exch.value == 0
            out.append({"shift": ppm.value, "atoms": atoms, "attached_h": h.value,
                        "shift_uncertainty": unc.value, "shift_method": method.value.decode()})
        else:
            assert h.value == 0
            out.append({"shift": ppm.value, "atoms": atoms, "count": count.value,
                        "shift_uncertainty": unc.value, "exchangeable": bool(exch.value),
                        "observed": True, "shift_method": method.value.decode()})
    return out


def atom_exchange(lib, res, rec, i):
    exch, observed = ctypes.c_int(-1), ctypes.c_int(-1)
    assert lib.nmr_result_atom_exchangeable(res, rec, i, ctypes.byref(exch), ctypes.byref(observed)) == NMR_OK
    return bool(exch.value), bool(observed.value)


def record_json(lib, res, rec):
    out = ctypes.c_void_p()
    assert lib.nmr_result_record_to_json(res, rec, ctypes.byref(out)) == NMR_OK
    try:
        return json.loads(ctypes.string_at(out.value).decode())
    finally:
        lib.nmr_string_free(out)


@pytest.mark.parametrize("smiles", ["Cc1ccccc1", "CC(C)(C)c1ccc(O)cc1", "CCOC(=O)CC(=O)OCC", "OC1CCCCC1"])
def test_shift_and_signal_accessors_agree_with_the_json_and_rdkit(lib, ctx, smiles):
    rc, res = predict(lib, ctx, smiles, "smiles")
    assert rc == NMR_OK, last_error(lib, ctx)
    try:
        mol = Chem.MolFromSmiles(smiles)
        n = lib.nmr_result_atom_count(res, 0)
        shifts = [atom_shift(lib, res, 0, i) for i in range(n)]
        rec = record_json(lib, res, 0)
        assert rec["tables_version"] == lib.nmr_result_tables_version(res).decode()
        assert rec["tables_version"] == lib.nmr_context_tables_version(ctx).decode()
        for i, (atom, s) in enumerate(zip(rec["atoms"], shifts)):
            proton = atom["element"] == "H" and atom["isotope"] in (None, 1)
            if atom["element"] == "C" or proton:
                assert not math.isnan(s["ppm"]) and s["uncertainty"] > 0, i
                assert atom["shift"] == s["ppm"] and atom["shift_uncertainty"] == s["uncertainty"]
                assert atom["shift_method"] == s["method"] and s["method"]
                assert atom["shift_references"] == s["references"]
                if proton:
                    assert (atom["exchangeable"], atom["observed"]) == atom_exchange(lib, res, 0, i)
            else:
                assert math.isnan(s["ppm"]) and math.isnan(s["uncertainty"]), i
                assert s["method"] == "" and s["references"] == []
                assert "shift" not in atom
        sig = signals(lib, res, 0)
        assert sig == rec["signals"]["13C"]
        assert [g["shift"] for g in sig] == sorted((g["shift"] for g in sig), reverse=True)
        # One signal per class of carbons, all atoms of a class in it (common practice).
        classes = [a["class"] for a in rec["atoms"]]
        carbons = [i for i, a in enumerate(rec["atoms"]) if a["element"] == "C"]
        assert sorted(i for g in sig for i in g["atoms"]) == carbons
        for g in sig:
            assert {classes[i] for i in g["atoms"]} == {classes[g["atoms"][0]]}
            assert {shifts[i]["ppm"] for i in g["atoms"]} == {g["shift"]}
            # RDKit's hydrogen count of the carbon (source: RDKit GetTotalNumHs).
            assert g["attached_h"] == mol.GetAtomWithIdx(g["atoms"][0]).GetTotalNumHs()
        assert len({classes[i] for i in carbons}) == len(sig)
        # 1H: one signal per class of protons; integrals add up to RDKit's
        # hydrogen count (CDCl3 exchanges nothing, so every proton is seen).
        h1 = signals(lib, res, 0, NMR_NUCLEUS_1H)
        assert h1 == rec["signals"]["1H"]
        assert rec["signals"]["1H_exchanged"] == []
        assert sum(g["count"] for g in h1) == sum(a.GetTotalNumHs() for a in mol.GetAtoms())
        protons = [i for i, a in enumerate(rec["atoms"]) if a["element"] == "H"]
        assert sorted(i for g in h1 for i in g["atoms"]) == protons
        assert len({classes[i] for i in protons}) == len(h1)
        assert lib.nmr_result_signal_count(res, 0, 99) == 0
    finally:
        lib.nmr_result_free(res)


def toluene_references(lib, ctx, blind):
    assert lib.nmr_context_set_option_double(ctx, NMR_OPT_BLIND, 1.0 if blind else 0.0) == NMR_OK
    rc, res = predict(lib, ctx, "Cc1ccccc1", "smiles")
    assert rc == NMR_OK, last_error(lib, ctx)
    try:
        return [atom_shift(lib, res, 0, i) for i in range(7)]
    finally:
        lib.nmr_result_free(res)


def test_blind_mode_leaves_out_the_compound_itself(lib, ctx):
    seen = toluene_references(lib, ctx, blind=False)
    assert all("toluene" in s["references"] for s in seen)
    # GOTTLIEB-1997, Table 2 (from memory): toluene CH3 21.5, para C 125.3.
    assert abs(seen[0]["ppm"] - 21.5) <= 0.01 and abs(seen[4]["ppm"] - 125.3) <= 0.01
    blind = toluene_references(lib, ctx, blind=True)
    assert not any("toluene" in s["references"] for s in blind)
    assert blind != seen


def test_user_records_come_first_and_bad_ones_are_refused(lib, ctx):
    before = lib.nmr_context_tables_version(ctx).decode()
    bad = b"id\tsmiles\tsolvent\tc13\th1\tsource\ndemo-a\tCC\tCDCl3\t0=7.0;1=x\t-\tdemo\n"
    assert lib.nmr_context_add_reference(ctx, bad) == NMR_ERR_TABLES
    assert ":2:" in last_error(lib, ctx)
    assert lib.nmr_context_add_reference(ctx, None) == NMR_ERR_ARGUMENT
    assert last_error(lib, ctx)
    assert lib.nmr_context_tables_version(ctx).decode() == before
    assert lib.nmr_context_add_reference(ctx, DEMO_TOLUENE.encode()) == NMR_OK, last_error(lib, ctx)
    after = lib.nmr_context_tables_version(ctx).decode()
    assert after.startswith(before + "+user-")
    shifts = toluene_references(lib, ctx, blind=False)
    for atom, want in ((0, 10.0), (1, 20.0), (2, 30.0), (6, 30.0), (3, 40.0), (5, 40.0), (4, 50.0)):  # demo data
        assert abs(shifts[atom]["ppm"] - want) <= 0.01, atom
        assert shifts[atom]["references"] == ["demo-user-toluene"]
    assert lib.nmr_context_add_reference(ctx, DEMO_TOLUENE.encode()) == NMR_ERR_TABLES
    assert "demo-user-toluene" in last_error(lib, ctx)


def test_shifts_off_keeps_the_rest(lib, ctx):
    rc, with_shifts = predict(lib, ctx, "CC(O)CC", "smiles")
    assert rc == NMR_OK
    assert lib.nmr_context_set_option_double(ctx, NMR_OPT_PREDICT_SHIFTS, 0.0) == NMR_OK
    rc, without = predict(lib, ctx, "CC(O)CC", "smiles")
    assert rc == NMR_OK
    try:
        a, b = record_json(lib, with_shifts, 0), record_json(lib, without, 0)
        assert b["signals"] == {} and len(a["signals"]["13C"]) == 4
        assert all("shift" not in atom for atom in b["atoms"])
        strip = [{k: v for k, v in atom.items() if not k.startswith("shift") and k not in ("exchangeable", "observed")}
                 for atom in a["atoms"]]
        assert strip == b["atoms"]
        assert lib.nmr_result_signal_count(without, 0, NMR_NUCLEUS_13C) == 0
        assert lib.nmr_result_signal_count(without, 0, NMR_NUCLEUS_1H) == 0
        assert math.isnan(atom_shift(lib, without, 0, 0)["ppm"])
    finally:
        lib.nmr_result_free(with_shifts)
        lib.nmr_result_free(without)


def test_a_bad_record_in_a_batch(lib, ctx):
    rc, res = predict(lib, ctx, "CC\nC1CC\nc1ccccc1\n", "smiles")
    assert rc == NMR_OK, last_error(lib, ctx)
    try:
        assert lib.nmr_result_record_count(res) == 3
        assert lib.nmr_result_failed_count(res) == 1
        assert [lib.nmr_result_record_status(res, k) for k in range(3)] == [NMR_OK, NMR_ERR_INPUT, NMR_OK]
        assert lib.nmr_result_record_error(res, 1).decode().strip()
        assert lib.nmr_result_record_error(res, 0).decode() == ""
        assert lib.nmr_result_atom_count(res, 1) == 0
        z = ctypes.c_int(-5)
        assert lib.nmr_result_atom_element(res, 1, 0, ctypes.byref(z), None) == NMR_ERR_ARGUMENT
        assert z.value == -5
        # Benzene: one carbon and one proton environment (common practice).
        assert lib.nmr_result_class_count(res, 2) == 2
        out = ctypes.c_void_p()
        assert lib.nmr_result_record_to_json(res, 1, ctypes.byref(out)) == NMR_OK
        rec = json.loads(ctypes.string_at(out.value).decode())
        lib.nmr_string_free(out)
        assert rec["record"] == 1 and rec["error"]["code"] == NMR_ERR_INPUT and rec["error"]["message"]
    finally:
        lib.nmr_result_free(res)


def test_failures_of_nmr_predict_leave_a_message(lib, ctx):
    rc, res = predict(lib, ctx, "")
    assert rc == NMR_ERR_INPUT and not res.value
    assert last_error(lib, ctx)
    rc, res = predict(lib, ctx, "CCO", "no-such-format")
    assert rc == NMR_ERR_ARGUMENT and not res.value
    assert "no-such-format" in last_error(lib, ctx)
    res = ctypes.c_void_p()
    assert lib.nmr_predict(ctypes.byref(res), ctx, None, None) == NMR_ERR_ARGUMENT
    assert last_error(lib, ctx)


def result_json(lib, res):
    out = ctypes.c_void_p()
    assert lib.nmr_result_to_json(res, ctypes.byref(out)) == NMR_OK
    try:
        return ctypes.string_at(out.value).decode()
    finally:
        lib.nmr_string_free(out)


def test_contexts_in_parallel_threads_give_the_sequential_results(lib):
    """ctypes releases the GIL during foreign calls, so the threads really do
    run the library at the same time, one context each (the header's rule)."""
    import threading

    texts = ["CC(O)CC\nc1ccc2ccccc2c1\n", "OC(=O)C(N)Cc1ccccc1\nCCOC(=O)C\n"] * 3

    def run(text):
        handle = ctypes.c_void_p()
        assert lib.nmr_context_new(ctypes.byref(handle), None) == NMR_OK
        try:
            rc, res = predict(lib, handle, text)
            assert rc == NMR_OK
            try:
                return result_json(lib, res)
            finally:
                lib.nmr_result_free(res)
        finally:
            lib.nmr_context_free(handle)

    expected = [run(t) for t in texts]
    got = [None] * len(texts)

    def work(k):
        got[k] = run(texts[k])

    threads = [threading.Thread(target=work, args=(k,)) for k in range(len(texts))]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert got == expected


def test_solvent_option_is_text_checked_against_the_tables(lib, ctx):
    value = ctypes.c_char_p()
    assert lib.nmr_context_get_option_string(ctx, NMR_OPT_SOLVENT, ctypes.byref(value)) == NMR_OK
    assert value.value.decode() == "CDCl3"
    assert lib.nmr_context_set_option_string(ctx, NMR_OPT_SOLVENT, b"chloroform-h") == NMR_ERR_ARGUMENT
    message = last_error(lib, ctx)
    assert "chloroform-h" in message and "CDCl3" in message and "D2O" in message
    assert lib.nmr_context_set_option_string(ctx, 4711, b"D2O") == NMR_ERR_UNSUPPORTED
    assert "4711" in last_error(lib, ctx)
    assert lib.nmr_context_set_option_string(ctx, NMR_OPT_BLIND, b"1") == NMR_ERR_UNSUPPORTED
    assert lib.nmr_context_set_option_double(ctx, NMR_OPT_SOLVENT, 1.0) == NMR_ERR_UNSUPPORTED
    assert "nmr_context_set_option_string" in last_error(lib, ctx)
    assert lib.nmr_context_set_option_string(ctx, NMR_OPT_SOLVENT, None) == NMR_ERR_ARGUMENT
    assert lib.nmr_context_set_option_string(ctx, NMR_OPT_SOLVENT, b"heavy water") == NMR_OK
    assert lib.nmr_context_get_option_string(ctx, NMR_OPT_SOLVENT, ctypes.byref(value)) == NMR_OK
    assert value.value.decode() == "D2O"


@pytest.mark.parametrize("solvent, oh_seen", [("CDCl3", True), ("DMSO-d6", True), ("D2O", False), ("CD3OD", False)])
def test_ethanol_proton_signals_by_solvent(lib, ctx, solvent, oh_seen):
    """Common practice: CH3 3, CH2 2, OH 1; the OH exchanges away in D2O and CD3OD."""
    assert lib.nmr_context_set_option_string(ctx, NMR_OPT_SOLVENT, solvent.encode()) == NMR_OK
    rc, res = predict(lib, ctx, "CCO", "smiles")
    assert rc == NMR_OK, last_error(lib, ctx)
    try:
        assert lib.nmr_result_solvent(res, 0).decode() == solvent
        h1 = signals(lib, res, 0, NMR_NUCLEUS_1H)
        rec = record_json(lib, res, 0)
        assert h1 == rec["signals"]["1H"]
        assert [g["shift"] for g in h1] == sorted((g["shift"] for g in h1), reverse=True)
        by_heavy = {rec["atoms"][g["atoms"][0]]["attached_to"]: g for g in h1}
        assert by_heavy[0]["count"] == 3 and by_heavy[1]["count"] == 2
        assert not by_heavy[0]["exchangeable"] and not by_heavy[1]["exchangeable"]
        assert (2 in by_heavy) == oh_seen
        assert atom_exchange(lib, res, 0, 8) == (True, oh_seen)
        if oh_seen:
            assert by_heavy[2]["count"] == 1 and by_heavy[2]["exchangeable"]
            assert rec["signals"]["1H_exchanged"] == []
        else:
            [oh] = rec["signals"]["1H_exchanged"]
            assert oh["atoms"] == [8] and oh["count"] == 1 and oh["observed"] is False
        assert rec["solvent"]["name"] == solvent
    finally:
        lib.nmr_result_free(res)


def test_deuterium_gives_no_proton_signal(lib, ctx):
    rc, res = predict(lib, ctx, "[2H]C([2H])([2H])CO", "smiles")
    assert rc == NMR_OK, last_error(lib, ctx)
    try:
        rec = record_json(lib, res, 0)
        deuterium = [i for i, a in enumerate(rec["atoms"]) if a["isotope"] == 2]
        assert len(deuterium) == 3
        for i in deuterium:
            assert math.isnan(atom_shift(lib, res, 0, i)["ppm"])
        h1 = signals(lib, res, 0, NMR_NUCLEUS_1H)
        assert not set(deuterium) & {i for g in h1 for i in g["atoms"]}
        assert sorted(g["count"] for g in h1) == [1, 2]
    finally:
        lib.nmr_result_free(res)


def test_predict_h1_off_gives_13c_only(lib, ctx):
    value = ctypes.c_double()
    assert lib.nmr_context_get_option_double(ctx, NMR_OPT_PREDICT_H1, ctypes.byref(value)) == NMR_OK
    assert value.value == 1.0
    assert lib.nmr_context_set_option_double(ctx, NMR_OPT_PREDICT_H1, 0.0) == NMR_OK
    rc, res = predict(lib, ctx, "CCO", "smiles")
    assert rc == NMR_OK
    try:
        assert lib.nmr_result_signal_count(res, 0, NMR_NUCLEUS_1H) == 0
        assert lib.nmr_result_signal_count(res, 0, NMR_NUCLEUS_13C) == 2
        assert list(record_json(lib, res, 0)["signals"]) == ["13C"]
    finally:
        lib.nmr_result_free(res)
