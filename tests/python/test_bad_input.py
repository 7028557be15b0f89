"""Hostile and oversized input, through the CLI and the Python API.

Project rule: bad input gets a clear error (status code + message naming the
problem), never a crash, hang or garbage; large but valid input gets a result.
Every case runs in a child process with a time limit, so a crash or a hang
fails the case instead of taking pytest down with it.

Expected class counts for the large valid inputs are graph facts (common
practice): an unbranched alkane C_n has n/2 carbon classes for even n (its
mirror symmetry pairs atom i with n-1-i), and n identical disconnected methanes
are all equivalent.
"""

import json
import os
import subprocess
import sys
import textwrap

import pytest

# Seconds a case may take. Generous for a shared 2-core machine; a hang or an
# exponential search runs far past it.
TIME_LIMIT_S = 120

# Ethanol as an MDL V2000 molfile, written for this test; cut short below.
ETHANOL_MOL = textwrap.dedent("""\
    ethanol
      handwritten

      3  2  0  0  0  0  0  0  0  0999 V2000
        0.0000    0.0000    0.0000 C   0  0  0  0  0  0  0  0  0  0  0  0
        1.5000    0.0000    0.0000 C   0  0  0  0  0  0  0  0  0  0  0  0
        2.2500    1.2990    0.0000 O   0  0  0  0  0  0  0  0  0  0  0  0
      1  2  1  0  0  0  0
      2  3  1  0  0  0  0
    M  END
    """)

TRUNCATED_MOL = ETHANOL_MOL[: ETHANOL_MOL.index("    2.2500")]
UNKNOWN_ELEMENT_MOL = ETHANOL_MOL.replace(" O   0", " Qz  0")

CHAIN_LENGTH = 5000
FRAGMENTS = 1000

# name -> (text, expectation). "error": must be refused with a message;
# "result": must be read, and the counts in `check` must hold.
CASES = {
    "empty text": ("", "error"),
    "whitespace only": ("   \n\t\n", "error"),
    "garbage": ("this is not a molecule ((((", "error"),
    "control characters": ("\x01\x02\x7f\x00abc", "error"),
    "truncated MOL block": (TRUNCATED_MOL, "error"),
    "unknown element symbol in SMILES": ("C[Qz]C", "error"),
    "unknown element symbol in a MOL block": (UNKNOWN_ELEMENT_MOL, "error"),
    "unclosed ring in SMILES": ("C1CCC", "error"),
    "5,000-atom chain": ("C" * CHAIN_LENGTH, "result"),
    "1,000 disconnected fragments": (".".join(["C"] * FRAGMENTS), "result"),
}

# Expected counts for the valid cases: (atoms, heavy atoms, carbon classes, hydrogen classes).
EXPECTED = {
    "5,000-atom chain": (CHAIN_LENGTH + 2 * CHAIN_LENGTH + 2, CHAIN_LENGTH, CHAIN_LENGTH // 2, CHAIN_LENGTH // 2),
    "1,000 disconnected fragments": (5 * FRAGMENTS, FRAGMENTS, 1, 1),
}

# Runs one prediction in a child interpreter and reports the outcome as JSON,
# so that a crash shows up as a signal and a hang as a timeout.
PY_CHILD = textwrap.dedent("""\
    import json, sys
    import nmrpred
    text = sys.stdin.buffer.read().decode("utf-8")
    try:
        p = nmrpred.predict(text)
    except Exception as e:
        print(json.dumps({"exception": type(e).__name__, "module": type(e).__module__,
                          "nmrpred_error": isinstance(e, getattr(nmrpred, "Error", ())),
                          "value_error": isinstance(e, ValueError), "message": str(e)}))
    else:
        z = [int(x) for x in p.atomic_numbers]
        topo = [int(x) for x in p.topological_classes]
        print(json.dumps({"atoms": int(p.atom_count), "heavy": int(p.heavy_atom_count),
                          "lengths": [len(p.atomic_numbers), len(p.hose), len(p.classes), len(topo)],
                          "c_classes": len({t for t, e in zip(topo, z) if e == 6}),
                          "h_classes": len({t for t, e in zip(topo, z) if e == 1})}))
    """)


def run(args, text, **kw):
    try:
        return subprocess.run(args, input=text.encode("utf-8"), capture_output=True,
                              timeout=TIME_LIMIT_S, **kw)
    except subprocess.TimeoutExpired:
        pytest.fail(f"no answer within {TIME_LIMIT_S} s (hang or runaway search)")


def check_counts(name, atoms, heavy, c_classes, h_classes):
    want = EXPECTED[name]
    assert (atoms, heavy, c_classes, h_classes) == want, (
        f"(atoms, heavy atoms, carbon classes, hydrogen classes): got {(atoms, heavy, c_classes, h_classes)}, "
        f"want {want} (common practice, see module doc)")


@pytest.mark.parametrize("name", list(CASES))
def test_python_api_answers_cleanly(name):
    text, expect = CASES[name]
    proc = run([sys.executable, "-c", PY_CHILD], text, env=dict(os.environ))
    assert proc.returncode == 0, (
        f"child interpreter ended with status {proc.returncode}: {proc.stderr.decode(errors='replace')[-2000:]}")
    out = json.loads(proc.stdout)
    if expect == "error":
        assert "exception" in out, f"expected an error, got a result: {out}"
        assert out["nmrpred_error"], f"{out['exception']} is not an nmrpred error: {out['message']}"
        assert out["value_error"], f"input errors derive from ValueError: {out['exception']}"
        assert out["message"].strip(), "error without a message"
    else:
        assert "exception" not in out, f"valid input refused: {out}"
        assert len(set(out["lengths"])) == 1 and out["lengths"][0] == out["atoms"], "per-atom arrays disagree in length"
        check_counts(name, out["atoms"], out["heavy"], out["c_classes"], out["h_classes"])


@pytest.mark.parametrize("name", list(CASES))
def test_cli_answers_cleanly(name, cli_path):
    text, expect = CASES[name]
    proc = run([cli_path, "predict", "-"], text)
    stderr = proc.stderr.decode(errors="replace")
    assert proc.returncode >= 0, f"killed by signal {-proc.returncode}: {stderr[-2000:]}"
    assert proc.returncode < 128, f"exit status {proc.returncode} looks like a crash: {stderr[-2000:]}"
    records = [json.loads(line) for line in proc.stdout.decode().splitlines() if line.strip()]
    errors = [r["error"] for r in records if "error" in r]
    for err in errors:
        assert err.get("code") and err.get("message", "").strip(), f"error without code or message: {err}"
    if expect == "error":
        assert proc.returncode != 0, "bad input must give a non-zero exit status"
        assert errors or stderr.strip(), "bad input must be explained (JSON error record or a message on stderr)"
        assert not [r for r in records if "atoms" in r], f"bad input produced a structure: {records}"
    else:
        assert proc.returncode == 0, f"valid input failed: {errors or stderr}"
        assert len(records) == 1, f"one record expected, got {len(records)}"
        atoms = records[0]["atoms"]
        c = {a["topological_class"] for a in atoms if a["element"] == "C"}
        h = {a["topological_class"] for a in atoms if a["element"] == "H"}
        heavy = sum(1 for a in atoms if a["element"] != "H")
        check_counts(name, len(atoms), heavy, len(c), len(h))


def test_cli_smiles_option_refuses_garbage_cleanly(cli_path):
    proc = run([cli_path, "predict", "--smiles", "C1CC", "--smiles", "CCO"], "")
    assert 0 < proc.returncode < 128, f"exit status {proc.returncode}"
    records = [json.loads(line) for line in proc.stdout.decode().splitlines() if line.strip()]
    assert [r["record"] for r in records] == [0, 1], "a bad record must not stop the next one"
    assert "error" in records[0] and records[0]["error"]["message"].strip()
    assert "atoms" in records[1] and len(records[1]["atoms"]) == 9, "ethanol has 9 atoms with hydrogens"
