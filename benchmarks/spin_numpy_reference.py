"""Blocked NumPy reference for timing libnmrpred's exact spin simulation.

Same problem as bench_spin (benchmarks/bench_spin.cpp), same spin systems
(benchmarks/spin_systems.json): spins-1/2 coupled strongly to each other, one
exact cluster, in two families. "random": no symmetry at all. "chain": CH3 and
CH2 groups of alkyl-like chains, magnetically equivalent within each group
(the library solves those with composite spins; the reference does not, it
only checks that the "class" marks in the file are magnetic equivalence). The
reference blocks the Hamiltonian by total Fz only: per block it builds the
Hamiltonian with vectorised index arithmetic, diagonalises it with
numpy.linalg.eigh (LAPACK through the BLAS NumPy is linked to), and gets every
transition of F- between adjacent blocks as V_f^T (F- V_i) with dense
matrices, keeping intensities >= 1e-9 (kMinLineIntensity). Its lines are
not merged (the library merges lines closer than 1e-4 Hz), so it reports more.

Run with Debian's interpreter, one thread, and Debian's OpenBLAS
(libopenblas0-pthread) installed so that NumPy uses it:
    OPENBLAS_NUM_THREADS=1 OMP_NUM_THREADS=1 /usr/bin/python3 benchmarks/spin_numpy_reference.py [REPEATS]
Regenerate the spin systems (seeded, so the file is reproducible):
    /usr/bin/python3 benchmarks/spin_numpy_reference.py --generate
Times are the process's CPU time (one thread; wall-clock time on a shared
machine measures the neighbours too), plus the median wall-clock time.
Asserts nothing.
"""

import os

# One thread, whatever the caller's environment: set before NumPy loads BLAS.
os.environ["OPENBLAS_NUM_THREADS"] = "1"
os.environ["OMP_NUM_THREADS"] = "1"

import json  # noqa: E402
import pathlib  # noqa: E402
import platform  # noqa: E402
import statistics  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402

import numpy as np  # noqa: E402

HERE = pathlib.Path(__file__).resolve().parent
SYSTEMS = HERE / "spin_systems.json"
MIN_LINE = 1e-9
SIZES = (8, 10, 12, 14)


# Chains of magnetically equivalent groups, as in alkyl chains CH3-(CH2)k-CH3
# with two different ends: group sizes per spin count.
CHAINS = {8: (3, 2, 3), 10: (3, 2, 2, 3), 12: (3, 2, 2, 2, 3), 14: (3, 2, 2, 2, 2, 3)}
# Every system is simulated as one exact cluster, as by the reference.
EXACT = {"weak_coupling_ratio": 1e300, "max_block_size": 4096}


def random_family(rng):
    """Strongly coupled systems: shifts within 0.05 ppm at 400 MHz (20 Hz) and
    3/4 of all pairs coupled by -15..15 Hz, no symmetry (invented values)."""
    systems = []
    for n in SIZES:
        shifts = 1.5 + rng.uniform(0.0, 0.05, n)
        couplings = [[i, j, round(float(rng.uniform(-15.0, 15.0)), 3)]
                     for i in range(n) for j in range(i + 1, n) if rng.uniform() < 0.75]
        systems.append({"name": f"{n} strongly coupled spins", "family": "random", "mhz": 400.0,
                        "spins": [{"shift": round(float(s), 5)} for s in shifts], "couplings": couplings, **EXACT})
    return systems


def chain_family(rng):
    """Alkyl-like chains of CH3 and CH2 groups (CHAINS), all within 0.4 ppm at
    60-100 MHz, so strongly coupled. Invented values in the usual ranges of
    alkyl chains (common practice): geminal 2J -12..-14.5 Hz inside each group
    (it moves no line of a magnetically equivalent group, but the reference
    includes it), vicinal 3J 6.5..7.8 Hz between neighbouring groups, 4J
    -0.6..0.3 Hz and 5J 0..0.4 Hz further along. The spins of a group share
    one shift, one "class" (Spin::equivalence_class) and equal couplings to
    every other spin, so they are magnetically equivalent."""
    systems = []
    for n in SIZES:
        sizes = CHAINS[n]
        mhz = float(rng.choice([60.0, 80.0, 100.0]))
        spins, first = [], []
        for g, size in enumerate(sizes):
            shift = round(float(0.9 + rng.uniform(0.0, 0.4)), 4)
            first.append(len(spins))
            spins += [{"shift": shift, "class": g} for _ in range(size)]
        members = [range(first[g], first[g] + size) for g, size in enumerate(sizes)]
        couplings = []
        for g in range(len(sizes)):
            geminal = round(float(-rng.uniform(12.0, 14.5)), 2)
            couplings += [[a, b, geminal] for a in members[g] for b in members[g] if a < b]
        for g in range(len(sizes)):
            for h in range(g + 1, len(sizes)):
                span = {1: (6.5, 7.8), 2: (-0.6, 0.3), 3: (0.0, 0.4)}.get(h - g)
                if span is None:
                    continue
                coupling = round(float(rng.uniform(*span)), 2)
                couplings += [[a, b, coupling] for a in members[g] for b in members[h]]
        couplings.sort()
        name = "-".join("CH3" if size == 3 else "CH2" for size in sizes)
        systems.append({"name": f"{n} spins {name}", "family": "chain", "mhz": mhz, "spins": spins,
                        "couplings": couplings, **EXACT})
    return systems


def generate():
    """Both families, seeded, so the file is reproducible."""
    systems = random_family(np.random.default_rng(20240605)) + chain_family(np.random.default_rng(20261202))
    SYSTEMS.write_text(json.dumps({"comment": "invented spin systems for bench_spin and spin_numpy_reference.py "
                                              "(generated by the latter, --generate): family \"random\" (no "
                                              "symmetry) and family \"chain\" (CH3/CH2 groups, magnetically "
                                              "equivalent within a group, marked by \"class\")",
                                   "systems": systems}, indent=1) + "\n")
    print(f"wrote {SYSTEMS}")


def check_groups(system):
    """The group structure the library reads ("class": spins of one class are
    equivalent) must be magnetic equivalence, which the reference gets from
    the shifts and couplings alone: same shift, equal couplings to every spin
    outside the group. Raises ValueError otherwise."""
    n = len(system["spins"])
    j = np.zeros((n, n))
    for a, b, c in system["couplings"]:
        j[a, b] = j[b, a] = c
    classes = {}
    for k, spin in enumerate(system["spins"]):
        if "class" in spin:
            classes.setdefault(spin["class"], []).append(k)
    for cls, members in classes.items():
        outside = [k for k in range(n) if k not in members]
        for k in members[1:]:
            if system["spins"][k]["shift"] != system["spins"][members[0]]["shift"] or \
                    not np.array_equal(j[k, outside], j[members[0], outside]):
                raise ValueError(f"{system['name']}: class {cls} is not magnetically equivalent")


def simulate(system):
    """Line list (Hz, intensity) of the whole system, blocked by total Fz."""
    n = len(system["spins"])
    nu = np.array([s["shift"] * system["mhz"] for s in system["spins"]])
    j = np.zeros((n, n))
    for a, b, c in system["couplings"]:
        j[a, b] = j[b, a] = c
    pairs = [(a, b, j[a, b]) for a in range(n) for b in range(a + 1, n) if j[a, b] != 0]
    states = np.arange(2**n)
    down = (states[:, None] >> np.arange(n)) & 1  # bit k set: spin k has m = -1/2
    m = 0.5 - down
    diag = m @ nu + 0.5 * np.einsum("si,ij,sj->s", m, j, m)
    ndown = down.sum(axis=1)
    pos = np.empty(2**n, dtype=np.int64)
    blocks = []
    for k in range(n + 1):
        idx = states[ndown == k]
        pos[idx] = np.arange(idx.size)
        blocks.append(idx)
    norm = 2.0**n / 2.0
    lines_hz, lines_int = [], []
    previous = None
    for k in range(n + 1):
        idx = blocks[k]
        h = np.zeros((idx.size, idx.size))
        h[np.arange(idx.size), np.arange(idx.size)] = diag[idx]
        for a, b, c in pairs:
            s = idx[m[idx, a] != m[idx, b]]
            h[pos[s ^ (1 << a) ^ (1 << b)], pos[s]] += 0.5 * c
        energy, vectors = np.linalg.eigh(h)
        if previous is not None:
            e_i, v_i, idx_i = previous  # k - 1 spins down: the higher Fz
            lower = np.zeros((idx.size, idx_i.size))
            for a in range(n):
                s = idx_i[m[idx_i, a] > 0]
                lower[pos[s | (1 << a)], pos[s]] = 1.0
            amplitude = vectors.T @ (lower @ v_i)
            intensity = amplitude**2 / norm
            f, i = np.nonzero(intensity >= MIN_LINE)
            lines_hz.append(e_i[i] - energy[f])
            lines_int.append(intensity[f, i])
        previous = (energy, vectors, idx)
    return np.concatenate(lines_hz), np.concatenate(lines_int)


def blas_name():
    try:
        with open("/proc/self/maps") as f:
            maps = f.read()
    except OSError:
        return "unknown"
    for name in ("openblas", "blis", "mkl", "libblas"):
        if name in maps:
            return name
    return "unknown"


def main():
    if "--generate" in sys.argv[1:]:
        generate()
        return
    repeats = int(sys.argv[1]) if len(sys.argv) > 1 else 5
    systems = json.loads(SYSTEMS.read_text())["systems"]
    for system in systems:
        check_groups(system)
    simulate(systems[0])  # load BLAS before timing
    print(f"numpy {np.__version__}, BLAS: {blas_name()}, Python {platform.python_version()}, one thread")
    print(f"{'system':<32} {'median cpu':>10} {'min cpu':>10} {'max cpu':>10} {'wall':>10} {'lines':>9}")
    for system in systems:
        n = len(system["spins"])
        times, walls = [], []
        count = 0
        for _ in range(repeats if n < 14 else max(1, repeats // 3)):
            w0, t0 = time.perf_counter(), time.process_time()
            hz, _ = simulate(system)
            times.append(time.process_time() - t0)
            walls.append(time.perf_counter() - w0)
            count = hz.size
        print(f"{system['name']:<32} {statistics.median(times):>10.4f} {min(times):>10.4f} {max(times):>10.4f} "
              f"{statistics.median(walls):>10.4f} {count:>9}")


if __name__ == "__main__":
    main()
