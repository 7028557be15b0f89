"""The placement nmrpred match reports is of minimum cost.

The cost model is the one docs/matching.md states (defaults of MatchOptions).
Two independent solvers recompute the minimum:
  * 13C: SciPy's linear_sum_assignment (python3-scipy) on the equivalent
    assignment problem, where each observed line offers one slot at the
    residual cost minus the unexplained-peak cost and further slots at the
    residual cost plus the overlap cost, and each signal may take a slot
    "left without a peak" at the missing cost;
  * 1H with integrals: exhaustive enumeration of every placement of whole
    classes (small molecules), which is what "a class is never split" means.
Molecules: a seeded sample of small NCI molecules (rdkit-data), peak lists
drawn around their own predictions with a seeded generator.
"""

import itertools
import json
import math
import random
import subprocess

import numpy as np
import pytest

NU = 4.0            # MatchOptions::robust_nu
C13_MEAS = 0.2      # MatchOptions::c13_measurement_ppm
H1_MEAS = 0.02      # MatchOptions::h1_measurement_ppm
MISSING = 6.0       # MatchOptions::missing_cost
UNEXPLAINED = 6.0   # MatchOptions::unexplained_cost
OVERLAP = 2.0       # MatchOptions::overlap_cost
SEED = 7


def rho(z):
    return NU * math.log1p(z * z / NU)


def huber(r):
    a = abs(r)
    return a * a if a <= 2 else 4 * a - 4


def run(cli_path, *args):
    proc = subprocess.run([cli_path, *args], capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr
    return proc.stdout


@pytest.fixture(scope="module")
def small_molecules(cli_path, nci_smiles, tmp_path_factory):
    """Predictions of seeded NCI molecules with 2-6 1H signals and 2-12 13C signals."""
    rng = random.Random(SEED)
    pool = [s for s in nci_smiles if "." not in s and len(s) <= 25]
    rng.shuffle(pool)
    path = tmp_path_factory.mktemp("optimal") / "small.smi"
    path.write_text("".join(f"{s}\n" for s in pool[:200]))
    out = []
    for line in run(cli_path, "predict", "--format", "smiles", str(path)).splitlines():
        rec = json.loads(line)
        if "error" in rec:
            continue
        c13, h1 = rec["signals"]["13C"], rec["signals"]["1H"]
        if 2 <= len(h1) <= 6 and 2 <= len(c13) <= 12:
            out.append((pool[rec["record"]], rec))
    assert len(out) >= 12
    return out[:12]


def far_from_solvent(shift, nucleus):
    """Keeps drawn peaks clear of CDCl3's residual lines (FULMER-2010: 7.26, 77.16 ppm; water 1.56)."""
    if nucleus == "13C":
        return abs(shift - 77.16) > 1.0
    return abs(shift - 7.26) > 0.1 and abs(shift - 1.56) > 0.3


def test_13c_placement_equals_the_linear_assignment_optimum(cli_path, small_molecules):
    from scipy.optimize import linear_sum_assignment

    rng = random.Random(SEED + 1)
    for smiles, rec in small_molecules:
        signals = rec["signals"]["13C"]
        peaks = []
        for s in signals:
            if rng.random() < 0.8:
                peaks.append(round(s["shift"] + rng.gauss(0, 3 * s["shift_uncertainty"]), 1))
        peaks.append(round(rng.uniform(10, 200), 1))
        peaks = [p for p in peaks if far_from_solvent(p, "13C")]
        measured = json.dumps({"nucleus": "13C", "solvent": "CDCl3", "peaks": [{"shift": p} for p in peaks]})
        got = json.loads(run(cli_path, "match", "--smiles", smiles, "--measured", measured))
        score = got["candidates"][0]["score"]

        n, m = len(signals), len(peaks)
        big = 1e9
        cost = np.full((n, m * n + n), big)
        for i, s in enumerate(signals):
            sd = math.hypot(s["shift_uncertainty"], C13_MEAS)
            for j, p in enumerate(peaks):
                r = rho((p - s["shift"]) / sd)
                cost[i, j * n] = r - UNEXPLAINED
                cost[i, j * n + 1:(j + 1) * n] = r + OVERLAP
            cost[i, m * n:] = MISSING
        rows, cols = linear_sum_assignment(cost)
        want = UNEXPLAINED * m + cost[rows, cols].sum()
        assert score == pytest.approx(want, abs=1e-6), smiles


def test_1h_placement_equals_exhaustive_search_over_whole_classes(cli_path, small_molecules):
    rng = random.Random(SEED + 2)
    for smiles, rec in small_molecules:
        signals = rec["signals"]["1H"]
        peaks = []
        for s in signals:
            shift = round(s["shift"] + rng.gauss(0, 2 * s["shift_uncertainty"]), 2)
            integral = max(1, s["count"] + rng.choice([0, 0, 0, 1, -1]))
            peaks.append((shift, integral))
        rng.shuffle(peaks)
        peaks = [p for p in peaks[: max(1, len(peaks) - rng.choice([0, 1]))] if far_from_solvent(p[0], "1H")]
        if not peaks:
            continue
        measured = json.dumps({"nucleus": "1H", "solvent": "CDCl3",
                               "peaks": [{"shift": p, "integral": i} for p, i in peaks]})
        got = json.loads(run(cli_path, "match", "--smiles", smiles, "--measured", measured))
        spectrum = got["candidates"][0]["spectra"][0]
        score = got["candidates"][0]["score"]

        def total(place):
            load = [0] * len(peaks)
            c = 0.0
            for s, d in zip(signals, place):
                if d < 0:
                    c += 0.0 if s["exchangeable"] else MISSING * s["count"]
                    continue
                sd = math.hypot(s["shift_uncertainty"], H1_MEAS)
                c += rho((peaks[d][0] - s["shift"]) / sd)
                load[d] += s["count"]
            for (_, integral), k in zip(peaks, load):
                c += huber((k - integral) / (0.1 * integral + 0.25))
            return c

        want = min(total(pl) for pl in itertools.product(range(-1, len(peaks)), repeat=len(signals)))
        assert score == pytest.approx(want, abs=1e-6), smiles
        assert spectrum["lower_bound"] <= score + 1e-9
        for assigned in spectrum["assignment"]:
            # whole classes: the protons on a peak are the union of its signals' atoms
            atoms = sorted(a for i in assigned["signals"] for a in signals[i]["atoms"])
            assert atoms == assigned["atoms"]
