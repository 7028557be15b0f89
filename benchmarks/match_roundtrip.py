"""Round trip of matching over every NCI molecule (rdkit-data's first_5K.smi).

The pytest check (tests/python/test_match_roundtrip.py) runs a seeded sample of
200 molecules through the command-line program; this benchmark runs the same
procedure over the whole file in-process, through the Python module:

  * every molecule the library reads and predicts: its predicted 13C and 1H
    signals, each moved by a normal deviate of its own predicted uncertainty
    (seeded) and rounded as chemists report (0.1 ppm 13C, 0.01 ppm 1H,
    integrals in whole protons), are matched back against the molecule; the
    share judged "consistent" is reported (issue target: >= 95 %);
  * every molecule sharing its formula (RDKit's CalcMolFormula) with another
    NCI constitution (RDKit canonical SMILES without stereo): one other such
    molecule drawn at random is ranked against it on the same lists; the share
    where the molecule itself scores strictly better is reported (ties count
    as misses).

Run with Debian's interpreter after a build with Python bindings:
    PYTHONPATH=build/python /usr/bin/python3 benchmarks/match_roundtrip.py [NCI_SMILES_FILE]
Prints figures; asserts nothing. Takes a few minutes on one core.
"""

import json
import os
import random
import statistics
import sys
import time

from rdkit import Chem, RDConfig, RDLogger
from rdkit.Chem.rdMolDescriptors import CalcMolFormula

import nmrpred

SEED = 20240611


def perturbed_lists(pred, rng):
    """Predicted 13C and 1H signals as measured JSON peak lists, perturbed and rounded."""
    record = json.loads(pred.to_json())
    lists = []
    for nucleus, decimals in (("13C", 1), ("1H", 2)):
        peaks = []
        for s in record["signals"].get(nucleus, []):
            peak = {"shift": round(s["shift"] + rng.gauss(0.0, s["shift_uncertainty"]), decimals)}
            if nucleus == "1H":
                peak["integral"] = s["count"]
            peaks.append(peak)
        if peaks:
            lists.append(json.dumps({"nucleus": nucleus, "solvent": "CDCl3", "peaks": peaks}))
    return lists


def main():
    path = sys.argv[1] if len(sys.argv) > 1 else os.path.join(RDConfig.RDDataDir, "NCI", "first_5K.smi")
    RDLogger.DisableLog("rdApp.*")
    smiles = [line.split()[0] for line in open(path) if line.strip()]

    by_formula, key_of = {}, {}
    for smi in smiles:
        mol = Chem.MolFromSmiles(smi)
        if mol is None:
            continue
        key = Chem.MolToSmiles(mol, isomericSmiles=False)
        key_of[smi] = key
        by_formula.setdefault(CalcMolFormula(mol), {}).setdefault(key, smi)
    partner_pool = {}
    for constitutions in by_formula.values():
        if len(constitutions) > 1:
            for smi in constitutions.values():
                partner_pool[smi] = sorted(s for s in constitutions.values() if s != smi)

    ctx = nmrpred.Context()
    rng = random.Random(SEED)
    t0 = time.process_time()
    n_in, skipped, consistent, verdicts = 0, 0, 0, {}
    pair_rows, not_consistent = [], []
    for smi in smiles:
        n_in += 1
        try:
            pred = ctx.predict(smi, format="smiles")
        except nmrpred.Error:
            skipped += 1
            continue
        lists = perturbed_lists(pred, rng)
        if not any('"13C"' in t for t in lists):
            skipped += 1
            continue
        candidates = [smi]
        other = None
        if smi in partner_pool:
            other = rng.choice(partner_pool[smi])
            candidates.append(other)
        try:
            result = ctx.match(candidates, lists)
        except nmrpred.Error as err:
            skipped += 1
            print(f"match failed for {smi}: {err}", file=sys.stderr)
            continue
        own = result.candidates[0]
        verdicts[own["verdict"]] = verdicts.get(own["verdict"], 0) + 1
        if own["verdict"] == "consistent":
            consistent += 1
        else:
            not_consistent.append((smi, own["verdict"]))
        if other is not None and "error" not in result.candidates[1]:
            margin = result.candidates[1]["score"] - own["score"]
            pair_rows.append((smi, other, margin))
    cpu = time.process_time() - t0

    judged = sum(verdicts.values())
    print(f"libnmrpred {nmrpred.__version__}; input {os.path.basename(path)}: {n_in} records, "
          f"{judged} matched, {skipped} skipped (not read, no 13C signal or match error); cpu {cpu:.1f} s")
    print(f"own structure consistent: {consistent}/{judged} ({100.0 * consistent / judged:.1f} %); "
          f"verdicts {verdicts}")
    firsts = sum(1 for *_, m in pair_rows if m > 0)
    margins = sorted(m for *_, m in pair_rows)
    print(f"own structure scores below a random same-formula molecule: {firsts}/{len(pair_rows)} "
          f"({100.0 * firsts / len(pair_rows):.1f} %); margin median {statistics.median(margins):.1f}, "
          f"10th percentile {margins[len(margins) // 10]:.1f}")
    print("not consistent (first 20):", not_consistent[:20])
    print("ranked below or tied (first 20):", [(a, b, round(m, 2)) for a, b, m in pair_rows if m <= 0][:20])


if __name__ == "__main__":
    main()
