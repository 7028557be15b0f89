"""Round trip of nmrpred match over NCI molecules (rdkit-data's first_5K.smi).

For a seeded sample of 200 NCI molecules that share their molecular formula
(RDKit's CalcMolFormula) with at least one other NCI molecule of a different
constitution (RDKit canonical SMILES without stereo), the predicted 13C and
1H spectra are perturbed within their own uncertainties (each signal moved by
a normal deviate with the signal's predicted standard deviation, seeded, then
rounded as chemists report: 0.1 ppm for 13C, 0.01 ppm for 1H, integrals in
whole protons) and matched back:
  * against the molecule itself, the verdict is "consistent" in >= 95 %;
  * ranked against one randomly drawn other molecule of the same formula, the
    molecule itself scores strictly better in >= 95 %.
Molecules the predictor rejects are skipped and counted. The sample keeps the
run near a minute on two cores (the whole file would take an hour through
the command-line program).

Run with Debian's interpreter:
    NMRPRED_BUILD_DIR=build /usr/bin/python3 -m pytest tests/python/test_match_roundtrip.py
"""

import json
import random
import subprocess
from concurrent.futures import ThreadPoolExecutor

import pytest

SEED = 20240611
SAMPLE = 200
MIN_CONSISTENT = 0.95
MIN_RANKED_FIRST = 0.95


@pytest.fixture(scope="module")
def sample(nci_smiles):
    from rdkit import Chem, RDLogger
    from rdkit.Chem.rdMolDescriptors import CalcMolFormula

    RDLogger.DisableLog("rdApp.*")
    by_formula = {}
    for smi in nci_smiles:
        mol = Chem.MolFromSmiles(smi)
        if mol is None:
            continue
        key = Chem.MolToSmiles(mol, isomericSmiles=False)
        by_formula.setdefault(CalcMolFormula(mol), {}).setdefault(key, smi)
    rng = random.Random(SEED)
    pairs = []
    for formula in sorted(by_formula):
        constitutions = sorted(by_formula[formula].values())
        if len(constitutions) < 2:
            continue
        for smi in constitutions:
            other = rng.choice([s for s in constitutions if s != smi])
            pairs.append((smi, other))
    rng.shuffle(pairs)
    return pairs[:SAMPLE]


def predict_all(cli_path, smiles, tmp_path):
    path = tmp_path / "structures.smi"
    path.write_text("".join(f"{s} m{k}\n" for k, s in enumerate(smiles)))
    proc = subprocess.run([cli_path, "predict", "--format", "smiles", str(path)],
                          capture_output=True, text=True, timeout=600)
    records = [json.loads(line) for line in proc.stdout.splitlines()]
    assert len(records) == len(smiles), proc.stderr
    return records


def perturbed(record, rng):
    """The record's 13C and 1H signals as measured peak lists (JSON), perturbed and rounded."""
    lists = []
    for nucleus, decimals in (("13C", 1), ("1H", 2)):
        peaks = []
        for s in record["signals"].get(nucleus, []):
            shift = round(s["shift"] + rng.gauss(0.0, s["shift_uncertainty"]), decimals)
            peak = {"shift": shift}
            if nucleus == "1H":
                peak["integral"] = s["count"]
            peaks.append(peak)
        if peaks:
            lists.append(json.dumps({"nucleus": nucleus, "solvent": "CDCl3", "peaks": peaks}))
    return lists


def match(cli_path, own, other, lists):
    args = [cli_path, "match", "--smiles", f"{own} own", "--smiles", f"{other} other"]
    for text in lists:
        args += ["--measured", text]
    proc = subprocess.run(args, capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, (own, other, proc.stderr)
    return json.loads(proc.stdout)


@pytest.fixture(scope="module")
def outcomes(cli_path, sample, tmp_path_factory):
    tmp = tmp_path_factory.mktemp("roundtrip")
    own = predict_all(cli_path, [p[0] for p in sample], tmp)
    other = predict_all(cli_path, [p[1] for p in sample], tmp)
    rng = random.Random(SEED)
    jobs, skipped = [], 0
    for (own_smi, other_smi), rec, orec in zip(sample, own, other):
        if "error" in rec or "error" in orec or not rec["signals"].get("13C"):
            skipped += 1
            continue
        jobs.append((own_smi, other_smi, perturbed(rec, rng)))
    with ThreadPoolExecutor(max_workers=2) as pool:
        results = list(pool.map(lambda j: match(cli_path, *j), jobs))
    rows = []
    for (own_smi, _, _), res in zip(jobs, results):
        scores = {r["title"]: r["score"] for r in res["ranking"]}
        verdict = res["candidates"][0]["verdict"]
        rows.append((own_smi, verdict, scores["own"] < scores["other"], scores["other"] - scores["own"],
                     res["candidates"][0]["reasons"]))
    return rows, skipped


def test_sample_is_large_enough(outcomes):
    rows, skipped = outcomes
    assert len(rows) >= 0.9 * SAMPLE, f"only {len(rows)} of {SAMPLE} molecules could be predicted ({skipped} skipped)"


def test_perturbed_own_spectrum_is_consistent(outcomes):
    rows, _ = outcomes
    bad = [(smi, verdict, reasons) for smi, verdict, _, _, reasons in rows if verdict != "consistent"]
    rate = 1 - len(bad) / len(rows)
    print(f"\nround trip: {len(rows) - len(bad)}/{len(rows)} consistent ({rate:.3f}); not consistent: {bad}")
    assert rate >= MIN_CONSISTENT, f"{rate:.3f} consistent; not: {bad[:10]}"


def test_own_structure_beats_a_same_formula_molecule(outcomes):
    rows, _ = outcomes
    misses = [(smi, round(margin, 2)) for smi, _, first, margin, _ in rows if not first]
    rate = 1 - len(misses) / len(rows)
    margins = sorted(margin for *_, margin, _ in rows)
    print(f"\nround trip: own structure first in {len(rows) - len(misses)}/{len(rows)} ({rate:.3f}); "
          f"margin median {margins[len(margins) // 2]:.2f}, 10th percentile {margins[len(margins) // 10]:.2f}; "
          f"missed: {misses}")
    assert rate >= MIN_RANKED_FIRST, f"{rate:.3f} ranked first; missed: {misses[:10]}"
