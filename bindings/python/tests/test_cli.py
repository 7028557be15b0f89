"""The nmrpred command-line program: shift output, --blind, --tables,
--reference, --no-shifts and the `reference` subcommand.

NMRPRED_BUILD_DIR (default <repo>/build) says where the build is; the program
is <build>/bin/nmrpred. Run with Debian's interpreter:
    NMRPRED_BUILD_DIR=build /usr/bin/python3 -m pytest bindings/python/tests

References outside the project:
  * GOTTLIEB-1997 (tables/SOURCES.md), Table 2: 13C of toluene in CDCl3 (from
    memory), kept as the record "toluene" of tables/reference/aromatic.tsv,
    whose rows are counted here from the file text.
  * Common practice: toluene shows five 13C signals; a spectrum is listed
    downfield first; ethanol's 1H signals integrate 3:2:1 (CH3, CH2, OH) and
    the OH proton exchanges away in D2O.
  * FULMER-2010 (tables/SOURCES.md): HDO in D2O at 4.79 ppm (from memory).
Records with "demo-" ids are demo data with invented values, not published.
"""

import json
import os
import pathlib
import subprocess

import pytest

REPO_ROOT = pathlib.Path(__file__).resolve().parents[3]
BUILD_DIR = pathlib.Path(os.environ.get("NMRPRED_BUILD_DIR", REPO_ROOT / "build")).resolve()
CLI = BUILD_DIR / "bin" / "nmrpred"

# Demo data (invented values, not published shifts).
DEMO_TOLUENE = ("id\tsmiles\tsolvent\tc13\th1\tsource\n"
                "demo-user-toluene\tCc1ccccc1\tCDCl3\t0=10.0;1=20.0;2,6=30.0;3,5=40.0;4=50.0\t-\tdemo data\n")


def run(*args):
    if not CLI.is_file():
        pytest.fail(f"{CLI} does not exist: build the project first (set NMRPRED_BUILD_DIR)")
    return subprocess.run([str(CLI), *map(str, args)], capture_output=True, text=True, timeout=120)


def records(proc):
    return [json.loads(line) for line in proc.stdout.splitlines()]


def table_rows():
    """Reference records of tables/reference/*.tsv counted from the text."""
    n = 0
    for path in (REPO_ROOT / "tables" / "reference").glob("*.tsv"):
        lines = [line for line in path.read_text().splitlines() if line and not line.startswith("#")]
        n += len(lines) - 1
    return n


def test_predict_prints_shifts_signals_and_the_tables_version():
    proc = run("predict", "--smiles", "Cc1ccccc1 toluene")
    assert proc.returncode == 0, proc.stderr
    [rec] = records(proc)
    assert rec["tables_version"].startswith("builtin-")
    carbons = [a for a in rec["atoms"] if a["element"] == "C"]
    assert len(carbons) == 7
    for a in carbons:
        assert {"shift", "shift_uncertainty", "shift_method", "shift_references"} <= set(a)
        assert "toluene" in a["shift_references"]
    assert all("shift" not in a for a in rec["atoms"] if a["element"] not in ("C", "H"))
    assert all("shift" in a and a["exchangeable"] is False for a in rec["atoms"] if a["element"] == "H")
    assert abs(carbons[0]["shift"] - 21.5) <= 0.01  # GOTTLIEB-1997 toluene CH3
    sig = rec["signals"]["13C"]
    assert len(sig) == 5
    assert [g["shift"] for g in sig] == sorted((g["shift"] for g in sig), reverse=True)
    assert [g["attached_h"] for g in sig if g["atoms"] == [0]] == [3]


def test_blind_leaves_the_compound_itself_out():
    proc = run("predict", "--blind", "--smiles", "Cc1ccccc1")
    assert proc.returncode == 0, proc.stderr
    [rec] = records(proc)
    assert not any("toluene" in a.get("shift_references", []) for a in rec["atoms"])


def test_no_shifts_prints_the_foundation_output_only():
    proc = run("predict", "--no-shifts", "--smiles", "CCO")
    assert proc.returncode == 0, proc.stderr
    [rec] = records(proc)
    assert rec["signals"] == {}
    assert all("shift" not in a for a in rec["atoms"])


def test_user_reference_file_takes_precedence(tmp_path):
    path = tmp_path / "demo.tsv"
    path.write_text(DEMO_TOLUENE)
    proc = run("predict", "--reference", path, "--smiles", "Cc1ccccc1")
    assert proc.returncode == 0, proc.stderr
    [rec] = records(proc)
    assert "+user-" in rec["tables_version"]
    assert rec["atoms"][4]["shift"] == pytest.approx(50.0, abs=0.01)  # demo data
    assert rec["atoms"][4]["shift_references"] == ["demo-user-toluene"]


def test_bad_reference_or_tables_stop_the_command_with_a_message(tmp_path):
    bad = tmp_path / "bad.tsv"
    bad.write_text("id\tsmiles\tsolvent\tc13\th1\tsource\ndemo-a\tCC\tCDCl3\t0=abc\t-\tdemo\n")
    for args, part in (
        (("--reference", bad), f"{bad}:2"),
        (("--reference", tmp_path / "missing.tsv"), "missing.tsv"),
        (("--tables", REPO_ROOT / "tests"), "SOURCES.md"),
        (("--tables", tmp_path / "no-such-dir"), "no-such-dir"),
    ):
        proc = run("predict", *args, "--smiles", "CCO")
        assert proc.returncode == 2, (args, proc.stderr)
        assert part in proc.stderr, (args, proc.stderr)
        assert proc.stdout == ""


def test_tables_folder_gives_the_built_in_data_under_its_own_name():
    proc = run("predict", "--tables", REPO_ROOT / "tables", "--smiles", "Cc1ccccc1")
    assert proc.returncode == 0, proc.stderr
    [rec] = records(proc)
    builtin = records(run("predict", "--smiles", "Cc1ccccc1"))[0]
    assert rec["tables_version"] == "dir-" + builtin["tables_version"][len("builtin-"):]
    assert rec["signals"] == builtin["signals"]


def test_reference_lists_every_record(tmp_path):
    proc = run("reference")
    assert proc.returncode == 0, proc.stderr
    recs = records(proc)
    assert len(recs) == table_rows()
    for r in recs:
        assert {"id", "smiles", "solvent", "source", "file", "user", "c13", "h1"} <= set(r)
        assert r["user"] is False
        for entry in r["c13"] + r["h1"]:
            assert entry["atoms"] and 1 <= len(entry["ppm"]) <= 2
    toluene = next(r for r in recs if r["id"] == "toluene")
    assert toluene["file"] == "reference/aromatic.tsv"
    assert {"atoms": [0], "ppm": [21.5]} in toluene["c13"]

    path = tmp_path / "demo.tsv"
    path.write_text(DEMO_TOLUENE)
    with_user = records(run("reference", "--reference", path))
    assert len(with_user) == len(recs) + 1
    assert with_user[-1]["id"] == "demo-user-toluene"
    assert with_user[-1]["user"] is True and with_user[-1]["file"] == str(path)


def test_solvent_option_moves_the_oh_signal_to_the_exchanged_list():
    cdcl3 = records(run("predict", "--smiles", "CCO"))[0]
    assert sorted(g["count"] for g in cdcl3["signals"]["1H"]) == [1, 2, 3]
    assert cdcl3["solvent"]["name"] == "CDCl3"
    proc = run("predict", "--solvent", "D2O", "--smiles", "CCO")
    assert proc.returncode == 0, proc.stderr
    [rec] = records(proc)
    assert sorted(g["count"] for g in rec["signals"]["1H"]) == [2, 3]
    assert [g["atoms"] for g in rec["signals"]["1H_exchanged"]] == [[8]]
    assert rec["solvent"]["name"] == "D2O"
    assert rec["solvent"]["water_1h"] == pytest.approx(4.79, abs=0.005)


def test_unknown_solvent_exits_2_naming_the_known_ones():
    proc = run("predict", "--solvent", "chloroform-h", "--smiles", "CCO")
    assert proc.returncode == 2
    assert "chloroform-h" in proc.stderr and "CDCl3" in proc.stderr and "DMSO-d6" in proc.stderr
    assert proc.stdout == ""


def test_no_h1_prints_13c_only():
    [rec] = records(run("predict", "--no-h1", "--smiles", "CCO"))
    assert list(rec["signals"]) == ["13C"]


def test_solvents_lists_the_table():
    proc = run("solvents")
    assert proc.returncode == 0, proc.stderr
    recs = records(proc)
    lines = [line for line in (REPO_ROOT / "tables" / "solvents.tsv").read_text().splitlines()
             if line and not line.startswith("#")]
    assert [r["id"] for r in recs] == [line.split("\t")[0] for line in lines[1:]]
    for r in recs:
        assert {"id", "name", "residual_1h", "residual_13c", "water_1h", "aliases"} <= set(r)


# Couplings, multiplets and the `spectrum` subcommand.
# References outside the project:
#   * GOTTLIEB-1997 (tables/SOURCES.md), Table 1: ethyl acetate in CDCl3, OCH2
#     4.12 (q, J = 7.1 Hz), CH3 1.26 (t, J = 7.1 Hz), CH3CO 2.05 (s) (from memory).
#   * Common practice: 1H integrals of ethyl acetate 3:2:3; the 13C spectrum of
#     toluene has five signals.
#   * JCAMP-DX 5.01 (McDonald & Wilks, Appl. Spectrosc. 1988, 42, 151): a file
#     starts with ##TITLE= and ends with ##END=; ##NPOINTS gives the number of
#     ordinates.
#   * SVG 1.1 (W3C): an XML document whose root is {http://www.w3.org/2000/svg}svg,
#     checked with the standard library's XML parser.

def by_heavy_atom(rec):
    """1H signals keyed by the heavy atom their protons sit on."""
    attached = {a["index"]: a["attached_to"] for a in rec["atoms"]}
    return {attached[g["atoms"][0]]: g for g in rec["signals"]["1H"]}


def test_predict_lists_couplings_and_multiplets_of_ethyl_acetate():
    # CC(=O)OCC: 0 acetyl CH3, 4 OCH2, 5 CH3.
    [rec] = records(run("predict", "--smiles", "CC(=O)OCC"))
    assert rec["field_mhz"] == 400
    assert rec["couplings"]
    for c in rec["couplings"]:
        assert {"atoms", "bonds", "j_hz", "uncertainty_hz", "rule", "source"} <= set(c)
        assert len(c["atoms"]) == 2 and c["atoms"][0] < c["atoms"][1]
    sig = by_heavy_atom(rec)
    assert [sig[k]["count"] for k in (0, 4, 5)] == [3, 2, 3]
    assert [sig[k]["multiplicity"] for k in (0, 4, 5)] == ["s", "q", "t"]
    for k in (4, 5):
        assert abs(sig[k]["j_hz"][0] - 7.1) <= 1.0
    for g in sig.values():
        assert abs(sum(line["intensity"] for line in g["lines"]) - g["count"]) < 1e-6
        assert {"ppm", "hz", "intensity"} <= set(g["lines"][0])


def test_predict_mhz_and_no_couplings_options():
    [rec] = records(run("predict", "--mhz", "60", "--smiles", "CC(=O)OCC"))
    assert rec["field_mhz"] == 60
    for g in rec["signals"]["1H"]:
        for line in g["lines"]:
            assert abs(line["hz"] - 60 * line["ppm"]) < 1e-6
    [rec] = records(run("predict", "--no-couplings", "--smiles", "CC(=O)OCC"))
    assert "couplings" not in rec and "field_mhz" not in rec
    assert all("multiplicity" not in g for g in rec["signals"]["1H"])
    for bad in (["--mhz", "10"], ["--mhz", "nan"], ["--line-width", "0"]):
        proc = run("predict", *bad, "--smiles", "CCO")
        assert proc.returncode == 2, bad
        assert proc.stdout == ""


def test_spectrum_writes_svg_and_jcamp_and_prints_the_multiplets(tmp_path):
    import xml.etree.ElementTree as ET

    svg, jdx = tmp_path / "s.svg", tmp_path / "s.jdx"
    proc = run("spectrum", "--smiles", "CC(=O)OCC", "--svg", svg, "--jcamp", jdx, "--points", 4096,
               "--solvent-signals")
    assert proc.returncode == 0, proc.stderr
    out = json.loads(proc.stdout)
    assert out["nucleus"] == "1H" and out["field_mhz"] == 400
    labels = sorted(m["label"] for m in out["multiplets"])
    assert labels == ["q", "s", "t"]
    assert sorted(round(m["integral"]) for m in out["multiplets"]) == [2, 3, 3]
    assert any(s["text"] == "CDCl3" for s in out["solvent_signals"])
    assert out["text"].startswith("1H NMR (400 MHz, CDCl3)")
    root = ET.parse(svg).getroot()
    assert root.tag == "{http://www.w3.org/2000/svg}svg"
    text = jdx.read_text()
    assert text.startswith("##TITLE=")
    assert text.rstrip().endswith("##END=")
    assert "##NPOINTS=4096" in text
    assert "##.OBSERVE NUCLEUS=^1H" in text


def test_spectrum_13c_text_and_record_choice(tmp_path):
    proc = run("spectrum", "--smiles", "Cc1ccccc1", "--nucleus", "13C", "--text")
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.startswith("13C NMR (101 MHz, CDCl3)")
    out = json.loads(run("spectrum", "--smiles", "Cc1ccccc1", "--nucleus", "13C").stdout)
    assert len(out["multiplets"]) == 5
    two = tmp_path / "two.smi"
    two.write_text("CCO ethanol\nCC(=O)OCC ethyl acetate\n")
    proc = run("spectrum", two)
    assert proc.returncode == 2 and "--record" in proc.stderr
    out = json.loads(run("spectrum", two, "--record", 1).stdout)
    assert out["record"] == 1 and out["title"] == "ethyl acetate"
    proc = run("spectrum", two, "--record", 5)
    assert proc.returncode == 2 and "2 record" in proc.stderr
    for bad in (["--ppm", "5:1"], ["--ppm", "x"], ["--mhz", "5000"], ["--shape", "box"]):
        proc = run("spectrum", "--smiles", "CCO", *bad)
        assert proc.returncode == 2, bad
        assert proc.stderr
