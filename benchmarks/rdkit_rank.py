#!/usr/bin/python3
"""RDKit reference timings on the same SMILES file as bench_read_classes.

Times RDKit's SMILES parsing alone, and AddHs + CanonicalRankAtoms(breakTies=False)
(RDKit's symmetry classes, hydrogens included) on the parsed molecules, over
several repeats; prints median, min..max and molecules per second, as
bench_read_classes does. Single-threaded; run it pinned to one core.

Usage: /usr/bin/python3 benchmarks/rdkit_rank.py SMILES_FILE [REPEATS]
"""

import platform
import statistics
import sys
import time

import rdkit
from rdkit import Chem, RDLogger


def cpu_model():
    try:
        with open("/proc/cpuinfo", encoding="ascii", errors="replace") as f:
            for line in f:
                if line.startswith("model name"):
                    return line.split(":", 1)[1].strip()
    except OSError:
        pass
    return platform.processor() or platform.machine()


def timed(repeats, work):
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        work()
        times.append(time.perf_counter() - start)
    return statistics.median(times), min(times), max(times)


def report(stage, n, t):
    median, lo, hi = t
    print(f"{stage:<38} {n:>8} {median:>10.3f} {lo:>10.3f} {hi:>10.3f} {n / median if median else 0:>12.0f}")


def main():
    if len(sys.argv) < 2:
        sys.exit(__doc__)
    path = sys.argv[1]
    repeats = max(1, int(sys.argv[2])) if len(sys.argv) > 2 else 5
    RDLogger.DisableLog("rdApp.*")
    with open(path, encoding="ascii") as f:
        smiles = [line.split()[0] for line in f if line.strip()]
    print(f"RDKit {rdkit.__version__}, Python {platform.python_version()} ({sys.executable})")
    print(f"machine: {cpu_model()}, {platform.system()} {platform.release()} {platform.machine()}")
    print(f"input: {path}\nrepeats: {repeats}\n")
    mols = [m for m in (Chem.MolFromSmiles(s) for s in smiles) if m is not None]
    print(f"records: {len(smiles)}, read: {len(mols)}, refused: {len(smiles) - len(mols)}\n")
    print(f"{'stage':<38} {'mols':>8} {'median s':>10} {'min s':>10} {'max s':>10} {'mols/s':>12}")

    report("RDKit read (MolFromSmiles)", len(smiles), timed(repeats, lambda: [Chem.MolFromSmiles(s) for s in smiles]))

    def rank_all():
        for m in mols:
            Chem.CanonicalRankAtoms(Chem.AddHs(m), breakTies=False, includeChirality=False)

    report("RDKit AddHs + CanonicalRankAtoms", len(mols), timed(repeats, rank_all))

    def read_and_rank():
        for s in smiles:
            m = Chem.MolFromSmiles(s)
            if m is not None:
                Chem.CanonicalRankAtoms(Chem.AddHs(m), breakTies=False, includeChirality=False)

    report("RDKit read + AddHs + rank", len(smiles), timed(repeats, read_and_rank))


if __name__ == "__main__":
    main()
