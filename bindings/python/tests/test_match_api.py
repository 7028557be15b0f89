"""parse_measured, format_measured and Context.match through the Python package.

References outside the project:
  * Ethanol in CDCl3: 1H 3.72 (q, CH2), 1.32 (s, OH), 1.25 (t, CH3); 13C
    58.28, 18.41. GOTTLIEB-1997 (tables/SOURCES.md), Tables 1 and 2 (from
    memory). Dimethyl ether, one 1H singlet (6H) and one 13C signal, is the
    wrong candidate (common practice: its six protons are equivalent).
  * tests/data/measured_corpus.json: peak lists typed by hand in the trade's
    prose style with the parse a chemist reads in them (formatting examples,
    not measured data); a second check of the reader through this package.
"""

import json
import pathlib

import pytest

import nmrpred

REPO_ROOT = pathlib.Path(__file__).resolve().parents[3]
CORPUS = json.loads((REPO_ROOT / "tests" / "data" / "measured_corpus.json").read_text(encoding="utf-8"))

ETHANOL_H1 = "1H NMR (400 MHz, CDCl3) δ 3.72 (q, J = 7.0 Hz, 2H), 1.32 (br s, 1H), 1.25 (t, J = 7.0 Hz, 3H)."
ETHANOL_C13 = "13C NMR (101 MHz, CDCl3) δ 58.3, 18.4."


def parse_case(case):
    return nmrpred.parse_measured(case["input"], format=case.get("format") or "auto",
                                  default_nucleus=case.get("default_nucleus"))


def _expected_peak(p):
    low = p.get("low", p.get("ppm"))
    high = p.get("high", p.get("ppm"))
    ppm = p.get("ppm", None if low is None else (low + high) / 2)
    return ppm, low, high


@pytest.mark.parametrize("case", CORPUS["cases"], ids=[c["id"] for c in CORPUS["cases"]])
def test_corpus_parses_as_a_chemist_reads_it(case):
    got = parse_case(case)
    assert len(got) == len(case["expect"])
    for g, e in zip(got, case["expect"]):
        assert g["nucleus"] == e["nucleus"]
        assert g["mhz"] == e.get("mhz")
        assert (g["solvent"] or "") == (e.get("solvent") or "")
        assert len(g["peaks"]) == len(e["peaks"])
        for gp, ep in zip(g["peaks"], e["peaks"]):
            ppm, low, high = _expected_peak(ep)
            assert gp["shift"] == pytest.approx(ppm, abs=1e-9)
            lo, hi = gp["range"] if gp["range"] is not None else (gp["shift"], gp["shift"])
            assert (lo, hi) == pytest.approx((low, high), abs=1e-9)
            assert gp["integral"] == ep.get("integral")
            assert (gp["multiplicity"] or "") == ep.get("multiplicity", "")
            assert gp["j_hz"] == pytest.approx(ep.get("j", []))
            assert gp["attached_h"] == ep.get("attached_h")
            assert (gp["assignment"] or "") == ep.get("assignment", "")


@pytest.mark.parametrize("case", CORPUS["cases"], ids=[c["id"] for c in CORPUS["cases"]])
def test_format_then_parse_gives_the_same_peaks(case):
    parsed = parse_case(case)
    text = nmrpred.format_measured(parsed)
    again = nmrpred.parse_measured(text)
    assert len(again) == len(parsed)
    for a, b in zip(parsed, again):
        assert a["nucleus"] == b["nucleus"]
        for pa, pb in zip(a["peaks"], b["peaks"]):
            digits = 0.006 if a["nucleus"] == "1H" else 0.06  # 2 / 1 decimals
            assert pb["shift"] == pytest.approx(pa["shift"], abs=digits)
            assert pb["multiplicity"] == pa["multiplicity"]
            assert pb["j_hz"] == pytest.approx(pa["j_hz"], abs=0.06)
    # The text form and the dict form normalise alike (the text form reads
    # with the defaults: recognised format, nucleus from the text).
    if not case.get("default_nucleus") and not case.get("format"):
        assert nmrpred.format_measured(case["input"]) == text


# A Python str cannot hold bytes that are not UTF-8: those cases are for the C
# interface (test_ctypes_abi.py).
TEXT_ERRORS = [c for c in CORPUS["errors"] if "input" in c]


@pytest.mark.parametrize("case", TEXT_ERRORS, ids=[c["id"] for c in TEXT_ERRORS])
def test_corpus_errors_raise_input_errors_naming_the_place(case):
    with pytest.raises(nmrpred.InputError) as e:
        parse_case(case)
    msg = str(e.value)
    assert case["message"] in msg
    assert f"line {case['line']}" in msg and f"column {case['column']}" in msg


def test_format_measured_normalises_long_names():
    text = nmrpred.format_measured("1H NMR (400 MHz, CDCl3) δ 1.250 (triplet, J = 7.04 Hz, 3H)")
    assert "1.25 (t, J = 7.0 Hz, 3H)" in text


def test_parse_measured_arguments():
    with pytest.raises(nmrpred.ArgumentError):
        nmrpred.parse_measured("7.31 (s, 1H)", format="yaml")
    with pytest.raises(nmrpred.ArgumentError):
        nmrpred.parse_measured("7.31 (s, 1H)", default_nucleus="19F")
    got = nmrpred.parse_measured("7.31 (s, 1H)", default_nucleus="1H")
    assert got[0]["nucleus"] == "1H" and got[0]["peaks"][0]["shift"] == pytest.approx(7.31)
    with pytest.raises(TypeError):
        nmrpred.parse_measured(b"7.31")


def test_ethanol_ranks_above_dimethyl_ether_and_a_bad_candidate_keeps_its_place():
    r = nmrpred.Context().match(["COC", "C1CC", "CCO"], [ETHANOL_H1, ETHANOL_C13])
    assert [x["candidate"] for x in r.ranking] == [2, 0]
    assert r.ranking[0]["score"] < r.ranking[1]["score"]
    assert r.margin == pytest.approx(r.ranking[1]["score"] - r.ranking[0]["score"])
    assert sum(x["probability"] for x in r.ranking) == pytest.approx(1.0)
    assert r.ranking[0]["verdict"] == "consistent"
    assert r.candidates[1]["error"]["name"] == "NMR_ERR_INPUT"
    best = r.best
    assert best is r.candidates[2]
    nuclei = {s["nucleus"] for s in best["spectra"]}
    assert nuclei == {"1H", "13C"}
    # Every peak of ethanol's own data is assigned (none unexplained).
    for s in best["spectra"]:
        assert all(a["role"] != "unexplained" for a in s["assignment"])
    assert json.loads(r.to_json())["ranking"] == r.ranking


def test_match_takes_one_text_and_module_level_function():
    r = nmrpred.match("CCO ethanol\nCOC ether\n", ETHANOL_H1 + "\n" + ETHANOL_C13)
    assert r.ranking[0]["title"] == "ethanol"
    single = nmrpred.match(["CCO"], ETHANOL_C13)
    assert single.margin is None and len(single.ranking) == 1


def test_match_errors():
    ctx = nmrpred.Context()
    with pytest.raises(nmrpred.InputError) as e:
        ctx.match(["CCO"], [ETHANOL_H1, "not a peak list"])
    assert "measured text 1" in str(e.value)
    with pytest.raises(nmrpred.ArgumentError):
        ctx.match(["CCO"], [ETHANOL_H1, ETHANOL_H1])  # two 1H spectra
    with pytest.raises(nmrpred.ArgumentError):
        ctx.match(["CCO"], [])
    with pytest.raises(nmrpred.InputError):
        ctx.match("   ", ETHANOL_H1)
    with pytest.raises(nmrpred.InputError):
        ctx.match(["CCO\nCOC"], ETHANOL_H1)
    with pytest.raises(TypeError):
        ctx.match([1], ETHANOL_H1)
    with pytest.raises(nmrpred.ArgumentError):
        ctx.match(["CCO"], ETHANOL_H1, solvent="no such solvent")
