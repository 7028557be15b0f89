"""Ranking constitutional isomers against published spectra (nmrpred match).

Each set of tests/data/isomer_sets.json holds 2-5 isomers of one molecular
formula and the 13C and 1H spectrum of one of them, written as in an
experimental section and recalled from the handbook named in its "source"
(PRETSCH-2009, GOTTLIEB-1997; see tables/SOURCES.md), all "(from memory)".
Every candidate is predicted blind (--blind): the built-in reference set
holds many of these compounds, and a lookup would return the very values
tested with. The true structure must rank strictly first (a tie counts as a
miss) in at least 90 % of the sets for 13C alone, 1H alone and both together.
RDKit (python3-rdkit) checks that the candidates of each set share one
molecular formula.

Run with Debian's interpreter:
    NMRPRED_BUILD_DIR=build /usr/bin/python3 -m pytest tests/python/test_match_isomers.py
"""

import json
import pathlib
import subprocess

import pytest

DATA = pathlib.Path(__file__).resolve().parents[1] / "data" / "isomer_sets.json"
MIN_RATE = 0.90


def load_sets():
    data = json.loads(DATA.read_text(encoding="utf-8"))
    return data["compounds"], data["sets"]


def rank(cli_path, compounds, entry, lists):
    args = [cli_path, "match", "--blind"]
    for name in entry["candidates"]:
        args += ["--smiles", f"{compounds[name]} {name}"]
    for text in lists:
        args += ["--measured", text]
    proc = subprocess.run(args, capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr
    return json.loads(proc.stdout)


def outcome(result, entry):
    """(true ranked strictly first, margin of the true one over the best other)."""
    names = entry["candidates"]
    scores = {names[r["record"]]: r["score"] for r in result["ranking"]}
    true = scores[entry["true"]]
    best_other = min(s for n, s in scores.items() if n != entry["true"])
    return true < best_other, best_other - true


def test_isomer_sets_are_isomers_and_well_formed():
    from rdkit import Chem
    from rdkit.Chem.rdMolDescriptors import CalcMolFormula

    compounds, sets = load_sets()
    assert len(sets) >= 25
    for entry in sets:
        assert 2 <= len(entry["candidates"]) <= 6, entry["true"]
        assert entry["true"] in entry["candidates"]
        assert "(from memory)" in entry["source"]
        formulas = {CalcMolFormula(Chem.MolFromSmiles(compounds[c])) for c in entry["candidates"]}
        assert len(formulas) == 1, (entry["true"], formulas)


@pytest.fixture(scope="module")
def outcomes(cli_path):
    compounds, sets = load_sets()
    out = {"13C": [], "1H": [], "both": []}
    for entry in sets:
        for mode, lists in (("13C", [entry["c13"]]), ("1H", [entry["h1"]]), ("both", [entry["c13"], entry["h1"]])):
            out[mode].append((entry["true"], *outcome(rank(cli_path, compounds, entry, lists), entry)))
    return out


@pytest.mark.parametrize("mode", ["13C", "1H", "both"])
def test_true_isomer_ranks_first(outcomes, mode):
    rows = outcomes[mode]
    hits = sum(1 for _, first, _ in rows if first)
    misses = [(name, round(margin, 2)) for name, first, margin in rows if not first]
    rate = hits / len(rows)
    margins = sorted(margin for _, _, margin in rows)
    print(f"\n{mode}: true isomer first in {hits}/{len(rows)} ({rate:.3f}); margin median "
          f"{margins[len(margins) // 2]:.2f}, min {margins[0]:.2f}; missed: {misses}")
    assert rate >= MIN_RATE, f"{mode}: {hits}/{len(rows)} first; missed (name, margin): {misses}"
