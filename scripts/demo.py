#!/usr/bin/python3
"""Demo: how many 13C and 1H signals should each intermediate of a route show?

The scenario is invented. A process-chemistry lab runs a four-step route to an
amine building block and checks every isolated intermediate by NMR before it
goes on. Before anyone looks at a spectrum, the chemist wants to know how many
signals the structure they believe they made should give, which atoms are
expected to coincide (symmetry), which protons on one carbon are nevertheless
different (diastereotopic), and whether a plausible isomer (here the
meta-fluoro compound from a contaminated starting material) would be told apart
by the signal count alone.

Where the library predicts them, estimated 13C shifts (with their
uncertainty) are listed beside each carbon class as a first guide for
assigning the measured spectrum.

The structures are read from a SMILES file (column 1: SMILES, the rest: sample
code and name), run through the command-line program `nmrpred predict`, and
its JSON Lines output is printed as one table per molecule.

Finally, for the key intermediate (INT-3 by default) the demo asks `nmrpred
spectrum` for its simulated 1H spectrum at 400 MHz: the multiplet list, the
same list written the way a paper's experimental section would, and an SVG
drawing plus a JCAMP-DX file in the output folder (default: demo/ inside the
build folder), to lay beside the measured spectrum. Then `nmrpred match` ranks
the proposed structure and two isomers against a 1H peak list for it; that
list (demo/INT-3_measured_invented.txt) is invented for the demo, not measured.

Run it through `bash scripts/demo.sh`, or directly:
    /usr/bin/python3 scripts/demo.py --cli build/bin/nmrpred demo/route.smi
"""

import argparse
import collections
import json
import pathlib
import subprocess
import sys

# Hill order for the formula: C, H, then the rest alphabetically.
def hill_formula(elements):
    counts = collections.Counter(elements)
    parts = []
    for sym in ("C", "H"):
        if sym in counts:
            n = counts.pop(sym)
            parts.append(sym + (str(n) if n > 1 else ""))
    for sym in sorted(counts):
        n = counts[sym]
        parts.append(sym + (str(n) if n > 1 else ""))
    return "".join(parts)


def read_titles(path):
    """Sample code and name per record, in file order (one record per non-empty line)."""
    titles = []
    with open(path, encoding="utf-8") as f:
        for line in f:
            line = line.strip()
            if not line:
                continue
            fields = line.split(None, 2)
            smiles = fields[0]
            code = fields[1] if len(fields) > 1 else f"#{len(titles)}"
            name = fields[2] if len(fields) > 2 else ""
            titles.append((code, name, smiles))
    return titles


def run_cli(cli, path):
    proc = subprocess.run([cli, "predict", path], capture_output=True, text=True, timeout=300)
    if proc.returncode < 0:
        sys.exit(f"demo: {cli} was killed by signal {-proc.returncode}\n{proc.stderr}")
    records = [json.loads(line) for line in proc.stdout.splitlines() if line.strip()]
    for rec in records:
        # The program writes null for "not bonded to a heavy atom"; -1 is easier to compare.
        for atom in rec.get("atoms", []):
            if atom.get("attached_to") is None:
                atom["attached_to"] = -1
    if not records and proc.returncode != 0:
        sys.exit(f"demo: {cli} failed (exit {proc.returncode}): {proc.stderr.strip()}")
    return records, proc.returncode


def class_groups(atoms, want_hydrogen):
    """Chemical classes among carbons (want_hydrogen False) or hydrogens, in atom order."""
    groups = collections.OrderedDict()
    for a in atoms:
        if (a["element"] == "H") != want_hydrogen:
            continue
        if not want_hydrogen and a["element"] != "C":
            continue
        groups.setdefault(a["class"], []).append(a)
    return groups


def atom_label(atoms, i):
    return f'{atoms[i]["element"]}{i}'


def summarize(atoms):
    carbons = class_groups(atoms, want_hydrogen=False)
    hydrogens = class_groups(atoms, want_hydrogen=True)
    exchangeable = {
        c for c, members in hydrogens.items()
        if all(m["attached_to"] >= 0 and atoms[m["attached_to"]]["element"] in ("N", "O", "S") for m in members)
    }
    return carbons, hydrogens, exchangeable


def print_record(code, name, smiles, rec):
    print("=" * 78)
    print(f"{code}  {name}")
    print(f"  SMILES   {smiles}")
    if "error" in rec:
        err = rec["error"]
        print(f"  could not be processed: [{err.get('code')}] {err.get('message')}")
        return None
    atoms = rec["atoms"]
    carbons, hydrogens, exchangeable = summarize(atoms)
    formula = hill_formula(a["element"] for a in atoms)
    n_frag_hint = " (salt: counter-ion included)" if "." in smiles else ""
    print(f"  formula  {formula}{n_frag_hint}, {len(atoms)} atoms with hydrogens")
    h_note = f" ({len(exchangeable)} of them on N/O/S: broad or exchanged, solvent-dependent)" if exchangeable else ""
    print(f"  expected 13C signals: {len(carbons)}    expected 1H signals: {len(hydrogens)}{h_note}")
    for w in rec.get("warnings", []):
        print(f"  note: {w}")

    # Predicted 13C shifts, where this build of the library gives them.
    with_shift = any(m.get("shift") is not None for ms in carbons.values() for m in ms)
    print("  carbons (atom indices are 0-based, as in the input)")
    ppm_head = f" {'13C ppm (est.)':>15}" if with_shift else ""
    print(f"    {'class':>5}  {'atoms':<14} {'topo':>4}{ppm_head}  HOSE code")
    for cls, members in carbons.items():
        idx = " ".join(atom_label(atoms, m["index"]) for m in members)
        topo = members[0]["topological_class"]
        ppm = ""
        if with_shift:
            shift, unc = members[0].get("shift"), members[0].get("shift_uncertainty")
            ppm = f" {shift:>7.1f} +/- {unc:<4.1f}" if shift is not None and unc is not None else f" {'-':>15}"
        print(f"    {cls:>5}  {idx:<14} {topo:>4}{ppm}  {members[0]['hose']}")

    print("  hydrogens")
    print(f"    {'class':>5}  {'n':>2}  {'on':<12} {'topo':>4}  HOSE code")
    # Classes present on one heavy atom: more than one means its hydrogens differ.
    classes_on = collections.defaultdict(set)
    for cls, members in hydrogens.items():
        for m in members:
            classes_on[m["attached_to"]].add(cls)
    remarks = []
    for cls, members in hydrogens.items():
        carriers = sorted({m["attached_to"] for m in members})
        on = " ".join(atom_label(atoms, c) if c >= 0 else "-" for c in carriers)
        topo = members[0]["topological_class"]
        line = f"    {cls:>5}  {len(members):>2}  {on:<12} {topo:>4}  {members[0]['hose']}"
        split = [c for c in carriers if c >= 0 and len(classes_on[c]) > 1]
        if split:
            others = sorted(classes_on[split[0]] - {cls})
            line += f"   <- diastereotopic with class {', '.join(map(str, others))}"
            remarks.append(atom_label(atoms, split[0]))
        print(line)
    # Topologically equal but chemically different carbons: only stereochemistry
    # (a stereocentre or a double bond) tells them apart.
    topo_split = collections.defaultdict(set)
    for cls, members in carbons.items():
        topo_split[members[0]["topological_class"]].add(cls)
    stereo_split = [sorted(v) for v in topo_split.values() if len(v) > 1]
    if remarks:
        print(f"  diastereotopic CH2 protons on {', '.join(sorted(set(remarks), key=remarks.index))}: "
              "expect two signals (often an AB pattern), not one")
    for group in stereo_split:
        print(f"  carbon classes {', '.join(map(str, group))} share one constitution but differ by "
              "stereochemistry: expect separate signals (they may still overlap)")
    return formula, len(carbons), len(hydrogens)


def show_spectrum(cli, smiles_file, titles, code, out_dir):
    """Simulated 1H spectrum of the record `code`: multiplets, prose, SVG and JCAMP-DX files."""
    codes = [t[0] for t in titles]
    if code not in codes:
        print(f"\n(no sample {code} in {smiles_file}: no spectrum shown)")
        return True
    record = codes.index(code)
    out_dir.mkdir(parents=True, exist_ok=True)
    svg, jdx = out_dir / f"{code}_1H.svg", out_dir / f"{code}_1H.jdx"
    cmd = [cli, "spectrum", smiles_file, "--record", str(record), "--mhz", "400", "--solvent-signals",
           "--svg", str(svg), "--jcamp", str(jdx)]
    proc = subprocess.run(cmd, capture_output=True, text=True, timeout=120)
    print("=" * 78)
    print(f"Simulated 1H spectrum of {code} {titles[record][1]} (400 MHz, CDCl3)")
    if proc.returncode != 0:
        print(f"  could not be simulated (exit {proc.returncode}): {proc.stderr.strip()}")
        return False
    out = json.loads(proc.stdout)
    print(f"  {'ppm':>6}  {'label':<6} {'J / Hz':<18} {'nH':>3}  atoms")
    for m in out["multiplets"]:
        j = ", ".join(f"{v:.1f}" for v in m["j_hz"]) or "-"
        atoms = " ".join(map(str, m["atoms"]))
        print(f"  {m['ppm']:>6.2f}  {m['label']:<6} {j:<18} {m['integral']:>3.0f}  {atoms}")
    for s in out.get("solvent_signals", []):
        print(f"  {s['ppm']:>6.2f}  {s['label']:<6} {'-':<18} {'':>3}  solvent: {s['text']}")
    print("  as a paper would list it:")
    print(f"    {out['text']}")
    for w in out["warnings"]:
        print(f"  note: {w}")
    print(f"  drawing:  {svg}")
    print(f"  JCAMP-DX: {jdx}")
    print("  The shifts and couplings are estimates: expect the measured lines within the")
    print("  predicted uncertainty, with the same multiplet shapes.")
    return True


def show_match(cli, candidates, measured):
    """Ranks the candidates of `candidates` against the peak list in `measured` (invented demo data)."""
    if not (candidates.is_file() and measured.is_file()):
        print(f"\n(no {candidates.name} / {measured.name}: no match shown)")
        return True
    proc = subprocess.run([cli, "match", str(candidates), "--measured", str(measured)],
                          capture_output=True, text=True, timeout=120)
    print("=" * 78)
    print("Which structure fits the measured 1H list? (the list is INVENTED demo data)")
    print("  " + measured.read_text(encoding="utf-8").strip())
    if proc.returncode not in (0, 1) or not proc.stdout.strip():
        print(f"  could not be matched (exit {proc.returncode}): {proc.stderr.strip()}")
        return False
    out = json.loads(proc.stdout)
    print(f"  {'rank':>4}  {'score':>7}  {'verdict':<12} candidate")
    for k, r in enumerate(out.get("ranking", []), 1):
        score = r.get("score")
        score_text = f"{score:7.3f}" if isinstance(score, (int, float)) else f"{'-':>7}"
        print(f"  {k:>4}  {score_text}  {str(r.get('verdict', '')):<12} {r.get('title', '')}")
    if out.get("margin") is not None:
        print(f"  margin to the runner-up: {out['margin']}")
    return proc.returncode == 0


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--cli", required=True, help="path to the nmrpred program")
    ap.add_argument("--spectrum", default="INT-3", help="sample code whose 1H spectrum is simulated")
    ap.add_argument("--out", help="folder for the spectrum files (default: demo/ in the build folder)")
    ap.add_argument("smiles_file", help="SMILES file: SMILES, sample code, name")
    args = ap.parse_args()
    out_dir = pathlib.Path(args.out) if args.out else pathlib.Path(args.cli).resolve().parent.parent / "demo"

    titles = read_titles(args.smiles_file)
    records, status = run_cli(args.cli, args.smiles_file)
    if len(records) != len(titles):
        sys.exit(f"demo: {len(titles)} structures in {args.smiles_file} but {len(records)} results")

    print("Route check: expected NMR signal counts for each intermediate")
    print("(13C counted with proton decoupling; C-F coupling splits lines into doublets")
    print(" but adds no signals. Counts are upper bounds: accidental overlap is common.)")
    summary = []
    for (code, name, smiles), rec in zip(titles, records):
        info = print_record(code, name, smiles, rec)
        if info:
            summary.append((code, name) + info)

    print("=" * 78)
    print(f"{'sample':<7} {'formula':<16} {'13C':>4} {'1H':>4}")
    for code, _, formula, nc, nh in summary:
        print(f"{code:<7} {formula:<16} {nc:>4} {nh:>4}")
    by_formula = collections.defaultdict(list)
    for row in summary:
        by_formula[row[2]].append(row)
    for formula, rows in by_formula.items():
        if len(rows) < 2:
            continue
        print(f"\nIsomers in this set ({formula}):")
        for code, name, _, nc, nh in rows:
            print(f"  {code:<7} {nc:>3} 13C / {nh:>3} 1H signals   {name}")
        if len({(r[3], r[4]) for r in rows}) == len(rows):
            print("  The signal counts differ, so a clean spectrum can tell these apart.")
        else:
            print("  Some share their signal counts: counts alone will not tell them apart.")
    spectrum_ok = show_spectrum(args.cli, args.smiles_file, titles, args.spectrum, out_dir)
    demo_dir = pathlib.Path(args.smiles_file).resolve().parent
    match_ok = show_match(args.cli, demo_dir / f"{args.spectrum}_candidates.smi",
                          demo_dir / f"{args.spectrum}_measured_invented.txt")
    print("\nThese counts and spectra support, and never replace, the measured spectrum and the")
    print("lab's own release procedure.")
    return 0 if status == 0 and spectrum_ok and match_ok else 1


if __name__ == "__main__":
    sys.exit(main())
