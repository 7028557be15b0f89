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

import contextlib
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
    # couplings, spectra, measured data and matching
    "nmr_result_coupling_count": (ctypes.c_size_t, [vp, ctypes.c_size_t]),
    "nmr_result_coupling": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_size_t, c_size_p, c_size_p, c_double_p]),
    "nmr_result_coupling_detail": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_size_t, c_int_p, c_double_p,
                                                  c_char_pp]),
    "nmr_result_signal_multiplicity": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_int, ctypes.c_size_t,
                                                      c_char_pp]),
    "nmr_result_signal_j_count": (ctypes.c_size_t, [vp, ctypes.c_size_t, ctypes.c_int, ctypes.c_size_t]),
    "nmr_result_signal_j": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_int, ctypes.c_size_t, ctypes.c_size_t,
                                           c_double_p]),
    "nmr_result_signal_line_count": (ctypes.c_size_t, [vp, ctypes.c_size_t, ctypes.c_int, ctypes.c_size_t]),
    "nmr_result_signal_lines": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_int, ctypes.c_size_t, c_double_p,
                                               c_double_p, c_double_p, ctypes.c_size_t]),
    "nmr_simulate_json": (ctypes.c_int, [vpp, vp, ctypes.c_char_p]),
    "nmr_result_simulate": (ctypes.c_int, [vpp, vp, vp, ctypes.c_size_t, ctypes.c_int]),
    "nmr_spectrum_free": (None, [vp]),
    "nmr_spectrum_nucleus": (ctypes.c_int, [vp]),
    "nmr_spectrum_observe_mhz": (ctypes.c_double, [vp]),
    "nmr_spectrum_line_count": (ctypes.c_size_t, [vp]),
    "nmr_spectrum_lines": (ctypes.c_int, [vp, c_double_p, c_double_p, c_double_p, ctypes.c_size_t]),
    "nmr_spectrum_multiplet_count": (ctypes.c_size_t, [vp]),
    "nmr_spectrum_multiplet_label": (ctypes.c_int, [vp, ctypes.c_size_t, c_char_pp]),
    "nmr_spectrum_multiplet_ppm": (ctypes.c_int, [vp, ctypes.c_size_t, c_double_p, c_double_p, c_double_p]),
    "nmr_spectrum_multiplet_integral": (ctypes.c_int, [vp, ctypes.c_size_t, c_double_p]),
    "nmr_spectrum_multiplet_j_count": (ctypes.c_size_t, [vp, ctypes.c_size_t]),
    "nmr_spectrum_multiplet_j": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_size_t, c_double_p]),
    "nmr_spectrum_multiplet_atom_count": (ctypes.c_size_t, [vp, ctypes.c_size_t]),
    "nmr_spectrum_multiplet_atom": (ctypes.c_int, [vp, ctypes.c_size_t, ctypes.c_size_t, c_size_p]),
    "nmr_spectrum_warning_count": (ctypes.c_size_t, [vp]),
    "nmr_spectrum_warning": (ctypes.c_char_p, [vp, ctypes.c_size_t]),
    "nmr_spectrum_default_points": (ctypes.c_size_t, [vp]),
    "nmr_spectrum_sample": (ctypes.c_int, [vp, c_double_p, c_double_p, ctypes.c_size_t]),
    "nmr_spectrum_to_jcamp": (ctypes.c_int, [vp, vpp]),
    "nmr_spectrum_to_svg": (ctypes.c_int, [vp, vpp]),
    "nmr_spectrum_to_json": (ctypes.c_int, [vp, vpp]),
    "nmr_measured_format": (ctypes.c_int, [vpp, vp, ctypes.c_char_p]),
    "nmr_match": (ctypes.c_int, [vpp, vp, ctypes.c_char_p, ctypes.c_char_p, ctypes.POINTER(ctypes.c_char_p),
                                 ctypes.c_size_t]),
    "nmr_match_result_free": (None, [vp]),
    "nmr_match_candidate_count": (ctypes.c_size_t, [vp]),
    "nmr_match_candidate_status": (ctypes.c_int, [vp, ctypes.c_size_t]),
    "nmr_match_candidate_error": (ctypes.c_char_p, [vp, ctypes.c_size_t]),
    "nmr_match_candidate_title": (ctypes.c_char_p, [vp, ctypes.c_size_t]),
    "nmr_match_ranked_count": (ctypes.c_size_t, [vp]),
    "nmr_match_ranked": (ctypes.c_int, [vp, ctypes.c_size_t, c_size_p]),
    "nmr_match_score": (ctypes.c_int, [vp, ctypes.c_size_t, c_double_p]),
    "nmr_match_probability": (ctypes.c_int, [vp, ctypes.c_size_t, c_double_p]),
    "nmr_match_verdict": (ctypes.c_int, [vp, ctypes.c_size_t, c_char_pp]),
    "nmr_match_reason_count": (ctypes.c_size_t, [vp, ctypes.c_size_t]),
    "nmr_match_reason": (ctypes.c_char_p, [vp, ctypes.c_size_t, ctypes.c_size_t]),
    "nmr_match_margin": (ctypes.c_int, [vp, c_double_p]),
    "nmr_match_to_json": (ctypes.c_int, [vp, vpp]),
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


@contextlib.contextmanager
def fresh_context(lib):
    """A context on the built-in tables, freed on leaving the block."""
    handle = ctypes.c_void_p()
    assert lib.nmr_context_new(ctypes.byref(handle), None) == NMR_OK
    assert handle.value
    try:
        yield handle
    finally:
        lib.nmr_context_free(handle)


@pytest.fixture
def ctx(lib):
    with fresh_context(lib) as handle:
        yield handle


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


def signals(lib, res, rec, nucleus=NMR_NUCLEUS_13C, couplings=True):
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
            item = {"shift": ppm.value, "atoms": atoms, "attached_h": h.value,
                    "shift_uncertainty": unc.value, "shift_method": method.value.decode()}
        else:
            assert h.value == 0
            item = {"shift": ppm.value, "atoms": atoms, "count": count.value,
                    "shift_uncertainty": unc.value, "exchangeable": bool(exch.value),
                    "observed": True, "shift_method": method.value.decode()}
        if couplings:
            # The keys the JSON adds when couplings were predicted (the default).
            mult = ctypes.c_char_p()
            assert lib.nmr_result_signal_multiplicity(res, rec, nucleus, k, ctypes.byref(mult)) == NMR_OK
            item["multiplicity"] = mult.value.decode()
            js = []
            for i in range(lib.nmr_result_signal_j_count(res, rec, nucleus, k)):
                j = ctypes.c_double()
                assert lib.nmr_result_signal_j(res, rec, nucleus, k, i, ctypes.byref(j)) == NMR_OK
                js.append(j.value)
            item["j_hz"] = js
            if nucleus == NMR_NUCLEUS_1H:
                n = lib.nmr_result_signal_line_count(res, rec, nucleus, k)
                p, hz, inten = (ctypes.c_double * max(n, 1))(), (ctypes.c_double * max(n, 1))(), \
                    (ctypes.c_double * max(n, 1))()
                assert lib.nmr_result_signal_lines(res, rec, nucleus, k, p, hz, inten, n) == NMR_OK
                if n:
                    assert lib.nmr_result_signal_lines(res, rec, nucleus, k, p, hz, inten, n - 1) == NMR_ERR_ARGUMENT
                item["lines"] = [{"ppm": p[i], "hz": hz[i], "intensity": inten[i]} for i in range(n)]
        out.append(item)
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


def assert_parallel_runs_match_sequential(run, texts):
    """run(text) for every text in threads of their own, all at once (ctypes
    releases the GIL during foreign calls), equals run(text) one at a time."""
    import threading

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


def test_contexts_in_parallel_threads_give_the_sequential_results(lib):
    """ctypes releases the GIL during foreign calls, so the threads really do
    run the library at the same time, one context each (the header's rule)."""
    texts = ["CC(O)CC\nc1ccc2ccccc2c1\n", "OC(=O)C(N)Cc1ccccc1\nCCOC(=O)C\n"] * 3

    def run(text):
        with fresh_context(lib) as handle:
            rc, res = predict(lib, handle, text)
            assert rc == NMR_OK
            try:
                return result_json(lib, res)
            finally:
                lib.nmr_result_free(res)

    assert_parallel_runs_match_sequential(run, texts)


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


# ------------------------------------------------------------------ spectra
# AB quartet closed form: H. Guenther, NMR Spectroscopy, 3rd ed., Wiley 2013,
# the AB system (from memory). Ethanol data in CDCl3: GOTTLIEB-1997
# (tables/SOURCES.md), Tables 1 and 2 (from memory). Ethyl triplet/quartet
# with 3J about 7 Hz: common practice.
NMR_OPT_FIELD_MHZ, NMR_OPT_LINE_WIDTH_HZ, NMR_OPT_PREDICT_COUPLINGS = 1, 2, 8
NMR_OPT_POINTS, NMR_OPT_PPM_LOW, NMR_OPT_PPM_HIGH, NMR_OPT_LINE_SHAPE = 9, 10, 11, 12

AB_JSON = '{"mhz": 400, "spins": [{"shift": 3.0}, {"shift": 3.05}], "couplings": [[0, 1, 10.0]]}'
ETHANOL_H1 = "1H NMR (400 MHz, CDCl3) δ 3.72 (q, J = 7.0 Hz, 2H), 1.32 (br s, 1H), 1.25 (t, J = 7.0 Hz, 3H)."
ETHANOL_C13 = "13C NMR (101 MHz, CDCl3) δ 58.3, 18.4."


def take_string(lib, ptr):
    try:
        return ctypes.string_at(ptr.value).decode("utf-8")
    finally:
        lib.nmr_string_free(ptr)


def simulate_json(lib, ctx, text):
    spec = ctypes.c_void_p()
    rc = lib.nmr_simulate_json(ctypes.byref(spec), ctx, text.encode())
    return rc, spec


def spectrum_lines(lib, spec):
    n = lib.nmr_spectrum_line_count(spec)
    ppm, hz, inten = (ctypes.c_double * n)(), (ctypes.c_double * n)(), (ctypes.c_double * n)()
    assert lib.nmr_spectrum_lines(spec, ppm, hz, inten, n) == NMR_OK
    return list(ppm), list(hz), list(inten)


def test_exact_simulations_in_parallel_threads_give_the_sequential_lines(lib):
    """Exact blocks of more than 100 states run on the system's LAPACK and
    BLAS (possibly a threaded OpenBLAS), smaller ones on Eigen in the calling
    thread: several threads at once, one context each, must get exactly the
    lines of one thread alone. Ten strongly coupled spins (invented values,
    Fz blocks of up to 252 states, so both paths run) and an A3B2X chain."""
    ten = {"mhz": 400, "weak_coupling_ratio": 1e300,
           "spins": [1.50 + 0.004 * k for k in range(10)],
           "couplings": [[i, j, round(-12.0 + 2.3 * ((3 * i + 5 * j) % 11), 2)]
                         for i in range(10) for j in range(i + 1, 10)]}
    chain = {"mhz": 60, "spins": [{"shift": 0.95, "class": 0}] * 3 + [{"shift": 1.30, "class": 1}] * 2 + [2.1],
             "couplings": [[i, j, 7.1] for i in range(3) for j in range(3, 5)] + [[3, 5, 6.0], [4, 5, 6.0]]}
    texts = [json.dumps(ten), json.dumps(chain)] * 3

    def run(text):
        with fresh_context(lib) as handle:
            rc, spec = simulate_json(lib, handle, text)
            assert rc == NMR_OK, last_error(lib, handle)
            try:
                return spectrum_lines(lib, spec)
            finally:
                lib.nmr_spectrum_free(spec)

    assert len(run(texts[0])[1]) > 1000
    assert_parallel_runs_match_sequential(run, texts)


def test_ab_quartet_through_the_c_abi(lib, ctx):
    rc, spec = simulate_json(lib, ctx, AB_JSON)
    assert rc == NMR_OK, last_error(lib, ctx)
    try:
        ppm, hz, inten = spectrum_lines(lib, spec)
        d = math.hypot(20.0, 10.0)
        centre = 3.025 * 400
        want = [centre - (d + 10) / 2, centre - (d - 10) / 2, centre + (d - 10) / 2, centre + (d + 10) / 2]
        assert hz == pytest.approx(want, abs=1e-3)
        assert inten == pytest.approx([(1 - 10 / d) / 2, (1 + 10 / d) / 2, (1 + 10 / d) / 2, (1 - 10 / d) / 2],
                                      abs=1e-6)
        small = (ctypes.c_double * 2)()
        assert lib.nmr_spectrum_lines(spec, small, None, None, 2) == NMR_ERR_ARGUMENT
        assert lib.nmr_spectrum_multiplet_count(spec) == 2
        # A JSON text of the same lines.
        out = ctypes.c_void_p()
        assert lib.nmr_spectrum_to_json(spec, ctypes.byref(out)) == NMR_OK
        doc = json.loads(take_string(lib, out))
        assert [l["hz"] for l in doc["lines"]] == pytest.approx(hz)
        # Sampled with Gaussian lines the area is the 2 protons.
        points = 8192
        xs, ys = (ctypes.c_double * points)(), (ctypes.c_double * points)()
        assert lib.nmr_spectrum_sample(spec, xs, ys, points) == NMR_OK
        step = (xs[points - 1] - xs[0]) / (points - 1)
        assert xs[0] == pytest.approx(-0.5) and xs[points - 1] == pytest.approx(12.0)
        assert sum(ys) * step == pytest.approx(2.0, abs=5e-3)
        assert lib.nmr_spectrum_sample(spec, xs, ys, 15) == NMR_ERR_ARGUMENT
        out = ctypes.c_void_p()
        assert lib.nmr_spectrum_to_jcamp(spec, ctypes.byref(out)) == NMR_OK
        jcamp = take_string(lib, out)
        npoints = int(re.search(r"^##NPOINTS=\s*(\d+)", jcamp, re.M).group(1))
        assert npoints == lib.nmr_spectrum_default_points(spec)
        out = ctypes.c_void_p()
        assert lib.nmr_spectrum_to_svg(spec, ctypes.byref(out)) == NMR_OK
        assert "</svg>" in take_string(lib, out)
    finally:
        lib.nmr_spectrum_free(spec)


def test_spectrum_options_and_errors(lib, ctx):
    v = ctypes.c_double()
    assert lib.nmr_context_get_option_double(ctx, NMR_OPT_FIELD_MHZ, ctypes.byref(v)) == NMR_OK and v.value == 400
    assert lib.nmr_context_get_option_double(ctx, NMR_OPT_PPM_LOW, ctypes.byref(v)) == NMR_OK
    assert math.isnan(v.value)
    for key, bad in ((NMR_OPT_FIELD_MHZ, 5.0), (NMR_OPT_LINE_WIDTH_HZ, -1.0), (NMR_OPT_POINTS, 8.0),
                     (NMR_OPT_LINE_SHAPE, 0.0), (NMR_OPT_PREDICT_COUPLINGS, 2.0), (NMR_OPT_PPM_LOW, math.inf)):
        assert lib.nmr_context_set_option_double(ctx, key, bad) == NMR_ERR_ARGUMENT
        assert last_error(lib, ctx)
    assert lib.nmr_context_set_option_double(ctx, NMR_OPT_LINE_SHAPE, 2.0) == NMR_OK
    assert lib.nmr_context_set_option_double(ctx, NMR_OPT_PPM_LOW, 2.0) == NMR_OK
    assert lib.nmr_context_set_option_double(ctx, NMR_OPT_PPM_HIGH, 4.0) == NMR_OK
    assert lib.nmr_context_set_option_double(ctx, NMR_OPT_POINTS, 4096.0) == NMR_OK
    rc, spec = simulate_json(lib, ctx, AB_JSON)
    assert rc == NMR_OK
    try:
        assert lib.nmr_spectrum_default_points(spec) == 4096
        xs, ys = (ctypes.c_double * 4096)(), (ctypes.c_double * 4096)()
        assert lib.nmr_spectrum_sample(spec, xs, ys, 4096) == NMR_OK
        assert xs[0] == pytest.approx(2.0) and xs[4095] == pytest.approx(4.0)
        assert sum(ys) * (2.0 / 4095) == pytest.approx(2.0, abs=1e-6)  # Gaussian: the whole area
    finally:
        lib.nmr_spectrum_free(spec)
    for bad, word in (("{oops", "JSON"), ('{"spins": [1], "color": 2}', "color"),
                      ('{"spins": [1, 2], "couplings": [[0, 7, 1.0]]}', "coupling"),
                      ('{"spins": [{"shift": "x"}]}', "shift"),
                      ('{"spins": [1], "line_width_hz": 1e999}', "range of a double")):
        rc, spec = simulate_json(lib, ctx, bad)
        assert rc == NMR_ERR_ARGUMENT and not spec.value
        assert word in last_error(lib, ctx)
    spec = ctypes.c_void_p()
    assert lib.nmr_simulate_json(ctypes.byref(spec), ctx, None) == NMR_ERR_ARGUMENT
    assert lib.nmr_simulate_json(ctypes.byref(spec), None, AB_JSON.encode()) == NMR_ERR_ARGUMENT
    lib.nmr_spectrum_free(None)
    assert lib.nmr_spectrum_line_count(None) == 0
    assert math.isnan(lib.nmr_spectrum_observe_mhz(None))


def test_record_couplings_multiplicities_and_spectrum(lib, ctx):
    rc, res = predict(lib, ctx, "CCO ethanol\nC1CC\n", "smiles")
    assert rc == NMR_OK
    try:
        n = lib.nmr_result_coupling_count(res, 0)
        a, b, j = ctypes.c_size_t(), ctypes.c_size_t(), ctypes.c_double()
        heavy = ctypes.c_ssize_t()
        vicinal = []
        for i in range(n):
            assert lib.nmr_result_coupling(res, 0, i, ctypes.byref(a), ctypes.byref(b), ctypes.byref(j)) == NMR_OK
            owners = set()
            for atom in (a.value, b.value):
                lib.nmr_result_atom_attached_to(res, 0, atom, ctypes.byref(heavy))
                owners.add(heavy.value)
            if owners == {0, 1}:
                vicinal.append(j.value)
        assert len(vicinal) == 6 and all(6.0 <= x <= 8.0 for x in vicinal)
        assert lib.nmr_result_coupling(res, 0, n, None, None, None) == NMR_ERR_ARGUMENT
        assert lib.nmr_result_coupling_count(res, 1) == 0
        label = ctypes.c_char_p()
        count = ctypes.c_int()
        seen = {}
        for sig in range(lib.nmr_result_signal_count(res, 0, NMR_NUCLEUS_1H)):
            lib.nmr_result_signal_integral(res, 0, NMR_NUCLEUS_1H, sig, ctypes.byref(count))
            assert lib.nmr_result_signal_multiplicity(res, 0, NMR_NUCLEUS_1H, sig, ctypes.byref(label)) == NMR_OK
            seen[count.value] = label.value.decode()
            if count.value == 3:
                assert lib.nmr_result_signal_j_count(res, 0, NMR_NUCLEUS_1H, sig) == 1
                assert lib.nmr_result_signal_j(res, 0, NMR_NUCLEUS_1H, sig, 0, ctypes.byref(j)) == NMR_OK
                assert 6.0 <= j.value <= 8.0
        assert seen[3] == "t" and seen[2] == "q"
        spec = ctypes.c_void_p()
        assert lib.nmr_result_simulate(ctypes.byref(spec), ctx, res, 0, NMR_NUCLEUS_1H) == NMR_OK
        try:
            labels = []
            for m in range(lib.nmr_spectrum_multiplet_count(spec)):
                assert lib.nmr_spectrum_multiplet_label(spec, m, ctypes.byref(label)) == NMR_OK
                labels.append(label.value.decode())
            assert "t" in labels and "q" in labels
        finally:
            lib.nmr_spectrum_free(spec)
        spec = ctypes.c_void_p()
        assert lib.nmr_result_simulate(ctypes.byref(spec), ctx, res, 1, NMR_NUCLEUS_1H) == NMR_ERR_INPUT
        assert lib.nmr_result_simulate(ctypes.byref(spec), ctx, res, 0, 2) == NMR_ERR_ARGUMENT
        assert "nucleus" in last_error(lib, ctx)
        assert not spec.value
    finally:
        lib.nmr_result_free(res)


def run_match(lib, ctx, candidates, texts, fmt=None):
    arr = (ctypes.c_char_p * max(1, len(texts)))(*[t.encode() if t is not None else None for t in texts])
    m = ctypes.c_void_p()
    rc = lib.nmr_match(ctypes.byref(m), ctx, fmt.encode() if fmt else None,
                       candidates.encode() if candidates is not None else None, arr, len(texts))
    return rc, m


def test_match_through_the_c_abi(lib, ctx):
    rc, m = run_match(lib, ctx, "COC dimethyl ether\nC1CC\nCCO ethanol\n", [ETHANOL_H1, ETHANOL_C13], "smiles")
    assert rc == NMR_OK, last_error(lib, ctx)
    try:
        assert lib.nmr_match_candidate_count(m) == 3
        assert lib.nmr_match_ranked_count(m) == 2
        c = ctypes.c_size_t()
        assert lib.nmr_match_ranked(m, 0, ctypes.byref(c)) == NMR_OK and c.value == 2
        assert lib.nmr_match_candidate_status(m, 1) == NMR_ERR_INPUT
        assert lib.nmr_match_candidate_error(m, 1).decode()
        score = ctypes.c_double()
        assert lib.nmr_match_score(m, 1, ctypes.byref(score)) == NMR_ERR_INPUT
        verdict = ctypes.c_char_p()
        assert lib.nmr_match_verdict(m, 2, ctypes.byref(verdict)) == NMR_OK
        assert verdict.value.decode() == "consistent"
        margin = ctypes.c_double()
        assert lib.nmr_match_margin(m, ctypes.byref(margin)) == NMR_OK and margin.value > 0
        out = ctypes.c_void_p()
        assert lib.nmr_match_to_json(m, ctypes.byref(out)) == NMR_OK
        doc = json.loads(take_string(lib, out))
        assert [r["candidate"] for r in doc["ranking"]] == [2, 0]
        assert doc["margin"] == pytest.approx(margin.value)
        assert doc["candidates"][1]["error"]["name"] == "NMR_ERR_INPUT"
        assert doc["candidates"][2]["title"] == "ethanol"
    finally:
        lib.nmr_match_result_free(m)
    for cands, texts, want, word in (
            ("CCO", [ETHANOL_H1, "no peaks here"], NMR_ERR_INPUT, "measured_texts[1]"),
            ("CCO", [ETHANOL_H1, ETHANOL_H1], NMR_ERR_ARGUMENT, "1H"),
            ("CCO", [ETHANOL_H1, None], NMR_ERR_ARGUMENT, "measured_texts[1]"),
            ("", [ETHANOL_H1], NMR_ERR_INPUT, "no structure"),
            (None, [ETHANOL_H1], NMR_ERR_ARGUMENT, "candidates_text")):
        rc, m = run_match(lib, ctx, cands, texts)
        assert rc == want and not m.value
        assert word in last_error(lib, ctx)
    rc, m = run_match(lib, ctx, "CCO", [])
    assert rc == NMR_ERR_ARGUMENT and "measured_count" in last_error(lib, ctx)
    lib.nmr_match_result_free(None)
    assert lib.nmr_match_candidate_count(None) == 0


def test_measured_format_through_the_c_abi(lib, ctx):
    corpus = json.loads((REPO_ROOT / "tests" / "data" / "measured_corpus.json").read_text(encoding="utf-8"))
    out = ctypes.c_void_p()
    # nmr_measured_format reads with the defaults (format recognised, nucleus
    # from the text): cases that need the caller's nucleus or format are left out.
    for case in corpus["cases"]:
        if case.get("default_nucleus") or case.get("format"):
            continue
        assert lib.nmr_measured_format(ctypes.byref(out), ctx, case["input"].encode()) == NMR_OK, case["id"]
        text = take_string(lib, out)
        assert text.count("\n") + 1 == len(case["expect"]), case["id"]
        # Normalised text reads back to the same number of peaks.
        again = ctypes.c_void_p()
        assert lib.nmr_measured_format(ctypes.byref(again), ctx, text.encode()) == NMR_OK, case["id"]
        assert take_string(lib, again) == text, case["id"]
    for case in corpus["errors"]:
        if case.get("default_nucleus") or case.get("format"):
            continue
        raw = bytes.fromhex(case["input_hex"]) if "input_hex" in case else case["input"].encode()
        out = ctypes.c_void_p()
        assert lib.nmr_measured_format(ctypes.byref(out), ctx, raw) == NMR_ERR_INPUT, case["id"]
        assert not out.value
        assert case["message"] in last_error(lib, ctx), case["id"]
