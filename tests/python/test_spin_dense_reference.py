"""`nmrpred simulate` against an independent dense reference written with NumPy.

The reference builds the full 2^n Hamiltonian of a spin-1/2 system in the
product basis from Kronecker products (no blocking, no composite spins, no
clusters), diagonalises it with numpy.linalg.eigh and takes every transition
of F- = sum I-_k with intensity |<f|F-|i>|^2. That is the textbook statement
of the problem (common practice: e.g. H. Gunther, "NMR Spectroscopy", 3rd ed.,
Wiley-VCH 2013, chapter on the analysis of spectra; from memory):

    H = sum_k nu_k Iz_k + sum_{k<l} J_kl I_k . I_l      (Hz)

Couplings between different isotopes are truncated to J Iz Iz (weak coupling;
common practice), and only the observed isotope's F- is taken. Intensities are
normalised the same way as the library documents (each observed spin's lines
add up to 1: divide by 2^n / 2).

Seeded random systems of 2 to 8 spins (and two of 10) mix strong coupling (shifts a few Hz
apart) and weak coupling (shifts hundreds of Hz apart); others carry planted
magnetically equivalent groups (A3B2..., AA'BB') and heteronuclear partners.
The library runs with weak_coupling_ratio = 1e300 (every coupled network of
one isotope exact), so every line must agree within 0.01 Hz and every
intensity within 1e-6 relative, after merging lines closer than 1e-4 Hz on
both sides in the same way (transitions below 1e-9, kMinLineIntensity, are
dropped first, as the library documents) and dropping lines below 1e-6 of
the strongest.
"""

import importlib.util
import json
import os
import pathlib
import subprocess

import numpy as np
import pytest

# IUPAC frequency ratios Xi/100 (Harris et al., Pure Appl. Chem. 2001, 73, 1795, Table 1; from memory).
# With truncated heteronuclear couplings they do not move any line of the observed isotope.
RATIOS = {"1H": 1.0, "19F": 0.94094011, "31P": 0.40480742, "13C": 0.25145020}
MERGE_HZ = 1e-4
DROP = 1e-6
MIN_LINE = 1e-9
# Below any allowed transition of these systems, far above rounding (1e-30).
EXACT_ZERO = 1e-20
# Degenerate transitions differ by rounding only (1e-12 Hz and less).
DEGENERATE_HZ = 1e-7


def dense_lines(system, observe="1H", min_line=MIN_LINE):
    """(hz, intensity) of every transition of the observed isotope, dense.

    Basis state b (0 <= b < 2^n) has spin k up (m = +1/2) when bit k is 0.
    """
    spins = system["spins"]
    n = len(spins)
    mhz = system["mhz"]
    nuclei = [s.get("nucleus", "1H") for s in spins]
    nu = np.array([s["shift"] * mhz * RATIOS[x] for s, x in zip(spins, nuclei)])
    dim = 2**n
    states = np.arange(dim)
    m = np.array([0.5 - ((states >> k) & 1) for k in range(n)])  # m[k, b]
    h = np.zeros((dim, dim))
    diag = nu @ m
    for i, j, coupling in system.get("couplings", []):
        diag = diag + coupling * m[i] * m[j]
        if nuclei[i] == nuclei[j]:
            # (J/2)(I+_i I-_j + I-_i I+_j) joins states whose spins i and j are opposite.
            flip = states[m[i] != m[j]]
            h[flip ^ (1 << i) ^ (1 << j), flip] += 0.5 * coupling
    h[states, states] += diag
    energy, vectors = np.linalg.eigh(h)
    lower = np.zeros((dim, dim))
    for k in range(n):
        if nuclei[k] == observe:
            up = states[m[k] > 0]
            lower[up | (1 << k), up] = 1.0  # I-_k: spin k from up to down
    amplitude = vectors.T @ lower @ vectors  # [f, i] = <f|F-|i>
    norm = dim / 2.0
    intensity = amplitude**2 / norm
    # Transitions below kMinLineIntensity (spin.hpp) are dropped before
    # merging, as the library documents.
    f_idx, i_idx = np.nonzero(intensity >= min_line)
    hz = energy[i_idx] - energy[f_idx]
    return list(zip(hz.tolist(), intensity[f_idx, i_idx].tolist()))


def merge(lines, tol=MERGE_HZ):
    """Runs of lines within tol of the run's first line become one line at the
    intensity-weighted position (the rule spin.hpp documents)."""
    lines = sorted(lines)
    out = []
    i = 0
    while i < len(lines):
        start = lines[i][0]
        j = i
        total = moment = 0.0
        while j < len(lines) and lines[j][0] - start <= tol:
            total += lines[j][1]
            moment += lines[j][0] * lines[j][1]
            j += 1
        out.append((moment / total if total > 0 else start, total))
        i = j
    return out


def compare(got, want, context, floor=0.0):
    """Every line of each side is on the other within 0.01 Hz and 1e-6 relative
    intensity (or `floor` absolute, if larger)."""
    top = max(x[1] for x in want)
    assert abs(max(x[1] for x in got) - top) <= 1e-6 * top, context
    for ours, theirs, label in ((want, got, "reference line missing from nmrpred"),
                                (got, want, "nmrpred line missing from the reference")):
        # Lines kept on one side are looked up among the other side's lines
        # down to half the threshold, so a line sitting on the threshold
        # cannot make the comparison flaky.
        pool = np.array(sorted(x for x in theirs if x[1] >= 0.5 * DROP * top))
        for hz, inten in ours:
            if inten < DROP * top:
                continue
            # Nearest line of the sorted pool: one of the two around hz.
            k = int(np.searchsorted(pool[:, 0], hz))
            k = min((c for c in (k - 1, k) if 0 <= c < len(pool)), key=lambda c: abs(pool[c, 0] - hz))
            assert abs(pool[k, 0] - hz) <= 0.01, f"{context}: {label}: line at {hz:.6f} Hz (nearest {pool[k, 0]:.6f})"
            assert abs(pool[k, 1] - inten) <= max(1e-6 * inten, floor), (
                f"{context}: line at {hz:.6f} Hz: intensity {pool[k, 1]!r} vs {inten!r}")


def run_cli(cli_path, system):
    proc = subprocess.run([cli_path, "simulate", "-"], input=json.dumps(system), capture_output=True, text=True,
                          timeout=120)
    assert proc.returncode == 0, proc.stderr
    return json.loads(proc.stdout)


def random_system(rng, n):
    """Shifts either a few Hz apart (strong) or spread over ppm (weak); random signed J."""
    mhz = float(rng.choice([60.0, 400.0]))
    spread_hz = float(rng.choice([5.0, 30.0, 600.0]))
    shifts = 1.0 + rng.uniform(0.0, spread_hz, n) / mhz
    couplings = []
    for i in range(n):
        for j in range(i + 1, n):
            if rng.uniform() < 0.7:
                couplings.append([i, j, float(rng.uniform(-16.0, 16.0))])
    return {"mhz": mhz, "spins": [{"shift": float(s)} for s in shifts], "couplings": couplings,
            "weak_coupling_ratio": 1e300, "max_block_size": 4096}


# Two 10-spin systems as well: their largest Fz block (252) takes the
# eigensolver's large-block path, which smaller systems never reach.
RANDOM_CASES = [(n, seed) for n in range(2, 9) for seed in range(4)] + [(10, 0), (10, 1)]


@pytest.mark.parametrize("n,seed", RANDOM_CASES)
def test_random_spin_systems_match_the_dense_reference(cli_path, n, seed):
    rng = np.random.default_rng(1000 * n + seed)
    system = random_system(rng, n)
    out = run_cli(cli_path, system)
    got = [(x["hz"], x["intensity"]) for x in out["lines"]]
    want = merge(dense_lines(system))
    compare(got, want, f"n={n} seed={seed}")
    # Each observed spin's lines add up to 1 (the documented normalisation).
    assert abs(sum(x[1] for x in got) - n) <= 1e-6 * n


def planted_systems():
    """Systems with magnetic equivalence and heteronuclear partners (shapes
    from the textbook spin-system nomenclature; values invented)."""
    out = []
    # A3B2 with identical couplings: composite spins 3/2, 1/2 (x2) and 1, 0.
    s = [{"shift": 1.20}] * 3 + [{"shift": 1.25}] * 2
    c = [[i, j, 7.1] for i in range(3) for j in range(3, 5)]
    out.append(("A3B2 strongly coupled", {"mhz": 100.0, "spins": s, "couplings": c}))
    # A2B2C: two groups and a third spin, all strongly coupled.
    s = [{"shift": 2.00}] * 2 + [{"shift": 2.03}] * 2 + [{"shift": 2.10}]
    c = [[0, 2, 6.5], [0, 3, 6.5], [1, 2, 6.5], [1, 3, 6.5], [0, 4, 1.5], [1, 4, 1.5], [2, 4, -3.0], [3, 4, -3.0],
         [0, 1, -12.0], [2, 3, -11.0]]
    out.append(("A2B2C", {"mhz": 200.0, "spins": s, "couplings": c}))
    # AA'BB' (as in a 1,2-disubstituted benzene): equivalent shifts, unequal couplings.
    s = [{"shift": 7.20}, {"shift": 7.20}, {"shift": 7.35}, {"shift": 7.35}]
    c = [[0, 1, 7.5], [2, 3, 1.5], [0, 2, 8.0], [1, 3, 8.0], [0, 3, 0.4], [1, 2, 0.4]]
    out.append(("AA'BB'", {"mhz": 300.0, "spins": s, "couplings": c}))
    # AA'XX' with X = 19F (as in 1,1-difluoroethene): the F pair mixes, so the
    # 1H part depends on J(F,F'); the 19F must be solved with the protons.
    s = [{"shift": 4.30}, {"shift": 4.30}, {"shift": -80.0, "nucleus": "19F"}, {"shift": -80.0, "nucleus": "19F"}]
    c = [[0, 1, 4.0], [2, 3, 36.0], [0, 2, 33.0], [1, 3, 33.0], [0, 3, 1.0], [1, 2, 1.0]]
    out.append(("AA'XX' with 19F", {"mhz": 400.0, "spins": s, "couplings": c}))
    # ABX with X = 31P: the X splits the AB pattern unequally (two AB subspectra).
    s = [{"shift": 3.50}, {"shift": 3.55}, {"shift": 20.0, "nucleus": "31P"}]
    c = [[0, 1, -14.0], [0, 2, 8.0], [1, 2, 12.0]]
    out.append(("ABX with 31P", {"mhz": 250.0, "spins": s, "couplings": c}))
    # A CF3 group coupled equally to two strongly coupled protons and one more.
    s = [{"shift": 3.90}, {"shift": 3.95}, {"shift": 1.30}] + [{"shift": -70.0, "nucleus": "19F"}] * 3
    c = [[0, 1, -12.0], [0, 2, 7.0], [1, 2, 6.5]] + [[0, k, 9.0] for k in range(3, 6)] + [[1, k, 9.0] for k in range(3, 6)]
    out.append(("ABC + CF3", {"mhz": 60.0, "spins": s, "couplings": c}))
    for _, system in out:
        system["weak_coupling_ratio"] = 1e300
    return out


@pytest.mark.parametrize("name,system", planted_systems(), ids=[n for n, _ in planted_systems()])
def test_equivalent_groups_and_heteronuclei_match_the_dense_reference(cli_path, name, system):
    out = run_cli(cli_path, system)
    got = [(x["hz"], x["intensity"]) for x in out["lines"]]
    want = merge(dense_lines(system))
    compare(got, want, name)
    protons = sum(1 for s in system["spins"] if s.get("nucleus", "1H") == "1H")
    assert abs(sum(x[1] for x in got) - protons) <= 1e-6 * protons


BENCHMARKS = pathlib.Path(__file__).resolve().parents[2] / "benchmarks"


def benchmark_reference():
    """benchmarks/spin_numpy_reference.py, the blocked NumPy reference of the
    speed benchmark (blocked by total Fz only: no composite spins). Its
    import pins BLAS threads through the environment; that is undone here."""
    saved = dict(os.environ)
    spec = importlib.util.spec_from_file_location("spin_numpy_reference", BENCHMARKS / "spin_numpy_reference.py")
    module = importlib.util.module_from_spec(spec)
    try:
        spec.loader.exec_module(module)
    finally:
        os.environ.clear()
        os.environ.update(saved)
    return module


BENCHMARK_SYSTEMS = json.loads((BENCHMARKS / "spin_systems.json").read_text())["systems"]
# The benchmark's chains of CH3/CH2 groups up to 12 spins: 8 and 10 against
# the dense reference above, 12 against the blocked one (14 spins would take
# it a minute). The random family's systems are like RANDOM_CASES; at 12
# spins its two million lines take the Python merge half a minute.
BENCHMARK_CASES = [s for s in BENCHMARK_SYSTEMS if len(s["spins"]) <= 12 and s["family"] == "chain"]


@pytest.mark.parametrize("system", BENCHMARK_CASES, ids=[s["name"] for s in BENCHMARK_CASES])
def test_benchmark_spin_systems_match_a_numpy_reference(cli_path, system):
    reference = benchmark_reference()
    reference.check_groups(system)  # "class" marks magnetic equivalence only
    document = {key: value for key, value in system.items() if key not in ("name", "family")}
    out = run_cli(cli_path, document)
    got = [(x["hz"], x["intensity"]) for x in out["lines"]]
    n = len(system["spins"])
    # Magnetically equivalent groups make many transitions degenerate, and
    # the references' eigensolvers split a degenerate line's intensity among
    # its transitions arbitrarily: dropping the pieces below
    # kMinLineIntensity before merging would lose part of the line. There
    # only exact zeros (forbidden transitions) are dropped.
    min_line = MIN_LINE if system["family"] == "random" else EXACT_ZERO
    if n <= 10:
        want = dense_lines(document, min_line=min_line)
    else:
        reference.MIN_LINE = min_line
        hz, intensity = reference.simulate(system)
        want = list(zip(hz.tolist(), intensity.tolist()))
    if system["family"] != "random":
        # A degenerate line's pieces (rounding apart) are one transition;
        # the threshold then applies to it, as the library applies it to
        # the transitions of its composite spins.
        want = [x for x in merge(want, DEGENERATE_HZ) if x[1] >= MIN_LINE]
    want = merge(want)
    # With composite spins a line at one frequency can still come from two
    # transitions (of different total spins); one of them below the threshold
    # is dropped by the library but not by the reference, so such a line may
    # differ by up to kMinLineIntensity.
    compare(got, want, system["name"], floor=0.0 if system["family"] == "random" else MIN_LINE)
    # Both sides drop the same transitions below kMinLineIntensity; at 12
    # spins the millions of them add up to about 1e-4 of the total, so the
    # totals are compared with each other rather than with n.
    assert abs(sum(x[1] for x in got) - sum(x[1] for x in want)) <= 1e-6 * n


@pytest.mark.parametrize("text,message", [
    ("{", "not valid JSON"),
    ("[]", "must be a JSON object"),
    ('{"spins": [1.0]}', "\"mhz\""),
    ('{"mhz": 400, "spins": [1.0], "coupling": []}', "unknown key \"coupling\""),
    ('{"mhz": 400, "spins": [{"shift": "x"}]}', "spin 0: \"shift\" must be a number"),
    ('{"mhz": 400, "spins": [1.0, 2.0], "couplings": [[0, -1, 7]]}', "must not be negative"),
    ('{"mhz": 400, "spins": [1.0, 2.0], "couplings": [[0, 5, 7]]}', "out of range"),
    ('{"mhz": 400, "spins": [1.0, 2.0], "couplings": [[0, 1, 7], [1, 0, 7]]}', "repeats coupling 0"),
    ('{"mhz": 4000, "spins": [1.0]}', "field_mhz"),
    ('{"mhz": 400, "spins": [{"shift": 1.0, "nucleus": "15N"}]}', "unknown nucleus"),
])
def test_bad_input_exits_2_with_a_message_naming_the_problem(cli_path, text, message):
    proc = subprocess.run([cli_path, "simulate", "-"], input=text, capture_output=True, text=True, timeout=60)
    assert proc.returncode == 2, proc.stderr
    assert message in proc.stderr
    assert proc.stdout == ""
