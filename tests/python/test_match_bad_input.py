"""Hostile and incomplete input to `nmrpred match`: a clear message and the
documented exit status, never a crash or a hang (exit codes as in
bindings/cli/main.cpp: 1 a record or the data failed, 2 the command line
cannot be carried out). Peak values are ethanol's 13C lines (58.3, 18.4 ppm,
GOTTLIEB-1997, from memory) and made-up demo values where the value does not
matter; common practice: carbon tetrachloride has no proton.
"""

import json
import subprocess

ETHANOL_13C = "13C NMR (CDCl3) δ 58.3, 18.4."


def run(cli_path, *args):
    return subprocess.run([cli_path, "match", *args], capture_output=True, text=True, timeout=60)


def test_an_empty_peak_list_is_an_input_error(cli_path):
    proc = run(cli_path, "--smiles", "CCO", "--measured", "13C NMR (CDCl3) δ .")
    assert proc.returncode == 1
    assert "chemical shift" in proc.stderr and "line 1" in proc.stderr


def test_a_nan_shift_is_an_input_error(cli_path):
    for text in ('{"nucleus": "13C", "peaks": [{"shift": NaN}]}', "13C NMR (CDCl3) δ nan, 18.4."):
        proc = run(cli_path, "--smiles", "CCO", "--measured", text)
        assert proc.returncode == 1, text
        assert proc.stderr.startswith("nmrpred: ") and "line 1" in proc.stderr
        assert proc.stdout == ""


def test_no_candidate_or_no_measured_data_is_a_usage_error(cli_path):
    proc = run(cli_path, "--measured", ETHANOL_13C)
    assert proc.returncode == 2 and "--smiles" in proc.stderr
    proc = run(cli_path, "--smiles", "CCO")
    assert proc.returncode == 2 and "--measured" in proc.stderr


def test_two_lists_of_one_nucleus_are_refused(cli_path):
    proc = run(cli_path, "--smiles", "CCO", "--measured", "13C NMR (CDCl3) δ 58.3.",
               "--measured", "13C NMR (CDCl3) δ 18.4.")
    assert proc.returncode == 2
    assert "two 13C spectra" in proc.stderr


def test_a_candidate_that_fails_to_read_is_reported_and_the_others_ranked(cli_path):
    proc = run(cli_path, "--smiles", "C1CC broken", "--smiles", "CCO ethanol", "--smiles", "COC dimethyl-ether",
               "--measured", ETHANOL_13C)
    assert proc.returncode == 1
    assert "1 of 3" in proc.stderr
    out = json.loads(proc.stdout)
    assert [r["title"] for r in out["ranking"]] == ["ethanol", "dimethyl-ether"]
    broken = out["candidates"][0]
    assert broken["record"] == 0 and broken["error"]["name"] == "NMR_ERR_INPUT"
    assert "C1CC" in broken["error"]["message"]
    assert out["margin"] > 0


def test_a_1h_list_against_a_molecule_without_hydrogen_is_inconsistent(cli_path):
    proc = run(cli_path, "--smiles", "ClC(Cl)(Cl)Cl", "--measured", "1H NMR (CDCl3) δ 3.50 (s, 2H).")
    assert proc.returncode == 0, proc.stderr
    cand = json.loads(proc.stdout)["candidates"][0]
    assert cand["verdict"] == "inconsistent"
    assert cand["summary"]["unexplained_peaks"] == 1
    assert any("no 1H signal" in w for w in cand["worst"])


def test_a_file_of_candidates_and_a_file_of_peaks_are_read(cli_path, tmp_path):
    structures = tmp_path / "candidates.smi"
    structures.write_text("COC dimethyl-ether\nCCO ethanol\n")
    peaks = tmp_path / "peaks.txt"
    peaks.write_text(ETHANOL_13C + "\n")
    proc = run(cli_path, str(structures), "--measured", str(peaks))
    assert proc.returncode == 0, proc.stderr
    out = json.loads(proc.stdout)
    assert out["ranking"][0]["title"] == "ethanol"
    assert abs(sum(r["probability"] for r in out["ranking"]) - 1) < 1e-9
