"""JCAMP-DX and SVG files of sampled spectra, checked from outside the library.

The doctest case "sample JCAMP-DX and SVG files are written for the format
checks" (tests/test_spectrum.cpp) is run alone in a temporary folder holding
an empty spectrum-format-samples/, where it then leaves demo spectra
(invented lines) with an index.json of what it sampled. Until the command-line program gains an entry
for spectra, this is how the files reach Python.

References outside the project:
  * JCAMP-DX: McDonald & Wilks, Appl. Spectrosc. 1988, 42, 151 (labels and
    their order, X++(Y..Y), AFFN, SQZ/DIF/DUP, Y checks, 80-character lines);
    Davies & Lampen, Appl. Spectrosc. 1993, 47, 1093 (NMR labels: .OBSERVE
    FREQUENCY, .OBSERVE NUCLEUS, XUNITS=HZ). From memory. The reader below
    is written from the standard, independently of the C++ writer and of the
    C++ test's reader.
  * Line shapes: SciPy's Cauchy (Lorentzian) and normal (Gaussian)
    distributions; an absorption line of FWHM w is Cauchy with scale w/2 and
    normal with sigma w / (2 sqrt(2 ln 2)) (common practice).
  * SVG 1.1 (W3C), parsed with xml.etree from Python's standard library.

Run with Debian's interpreter and NMRPRED_BUILD_DIR set (default build/):
    NMRPRED_BUILD_DIR=build /usr/bin/python3 -m pytest tests/python/test_spectrum_formats.py
"""

import json
import math
import re
import subprocess
import xml.etree.ElementTree as ET

import numpy as np
import pytest
from scipy import stats

from conftest import build_dir

CASE = "sample JCAMP-DX and SVG files are written for the format checks"
SVG_NS = "{http://www.w3.org/2000/svg}"
# NumPy 2 renamed trapz to trapezoid.
TRAPEZOID = getattr(np, "trapezoid", None) or np.trapz
REQUIRED_ORDER = ["TITLE", "JCAMP-DX", "DATA TYPE", "ORIGIN", "OWNER", "XUNITS", "YUNITS", "XFACTOR", "YFACTOR",
                  "FIRSTX", "LASTX", "NPOINTS", "FIRSTY", "XYDATA", "END"]


@pytest.fixture(scope="module")
def samples(tmp_path_factory):
    exe = build_dir() / "bin" / "nmrpred_tests"
    if not exe.is_file():
        pytest.fail(f"{exe} does not exist: build the project first (set NMRPRED_BUILD_DIR)")
    work = tmp_path_factory.mktemp("spectrum-formats")
    # The case writes here only when the folder exists (else to a temporary one).
    folder = work / "spectrum-format-samples"
    folder.mkdir()
    run = subprocess.run([str(exe), f"--test-case={CASE}"], cwd=work, capture_output=True, text=True, timeout=300)
    assert run.returncode == 0, run.stdout + run.stderr
    assert "1 passed" in run.stdout, run.stdout
    return folder, json.loads((folder / "index.json").read_text())


# ---- a JCAMP-DX reader written from the standard ----

SQZ = {"@": 0, **{c: i + 1 for i, c in enumerate("ABCDEFGHI")}, **{c: -(i + 1) for i, c in enumerate("abcdefghi")}}
DIF = {"%": 0, **{c: i + 1 for i, c in enumerate("JKLMNOPQR")}, **{c: -(i + 1) for i, c in enumerate("jklmnopqr")}}
DUP = {**{c: i + 1 for i, c in enumerate("STUVWXYZ")}, "s": 9}
TOKEN = re.compile(r"([@A-Ia-i%J-Rj-rS-Zs]|[+-]?(?=\d))(\d*)")


def decode_line(body):
    """Ordinates of one X++(Y..Y) line after its abscissa, and whether it ended on a DIF."""
    values, last_dif, diff = [], False, 0
    pos = 0
    while pos < len(body):
        if body[pos] == " ":
            pos += 1
            continue
        m = TOKEN.match(body, pos)
        assert m and m.end() > pos, f"cannot read {body[pos:pos + 10]!r}"
        head, digits = m.group(1), m.group(2)
        pos = m.end()
        if head in SQZ or head in ("", "+", "-"):
            if head in SQZ:
                first = SQZ[head]
                mag = int(str(abs(first)) + digits) if first != 0 or digits else 0
                value = -mag if first < 0 else mag
            else:
                value = int(head + digits)
            values.append(value)
            last_dif = False
        elif head in DIF:
            first = DIF[head]
            mag = int(str(abs(first)) + digits) if first != 0 or digits else 0
            diff = -mag if first < 0 else mag
            values.append(values[-1] + diff)
            last_dif = True
        else:
            count = int(str(DUP[head]) + digits)
            for _ in range(count - 1):
                values.append(values[-1] + diff if last_dif else values[-1])
    return values, last_dif


def read_jcamp(text):
    labels, xs, ys, lines = [], [], [], text.split("\n")
    in_data, prev_dif = False, False
    for raw in lines:
        assert len(raw) <= 80, f"line longer than 80 characters: {raw!r}"
        line = raw.split("$$", 1)[0].rstrip()
        if not line:
            continue
        if line.startswith("##"):
            label, _, value = line[2:].partition("=")
            labels.append((label.strip().upper(), value.strip()))
            in_data = labels[-1][0] == "XYDATA"
            continue
        if not in_data:
            continue
        m = re.match(r"[+-]?\d+(\.\d*)?", line)
        assert m, f"data line without abscissa: {line!r}"
        x = float(m.group(0))
        values, ended_dif = decode_line(line[m.end():])
        first_index = len(ys)
        if prev_dif and values:
            assert ys and values[0] == ys[-1], f"Y check failed at {line[:20]!r}"
            values = values[1:]
            first_index -= 1
        xs.append((first_index, x))
        ys.extend(values)
        prev_dif = ended_dif
    return labels, xs, np.array(ys, dtype=np.int64)


def shape_pdf(shape, x, centre, fwhm):
    if shape == "Lorentzian":
        return stats.cauchy.pdf(x, loc=centre, scale=fwhm / 2)
    return stats.norm.pdf(x, loc=centre, scale=fwhm / (2 * math.sqrt(2 * math.log(2))))


def shape_cdf(shape, x, centre, fwhm):
    if shape == "Lorentzian":
        return stats.cauchy.cdf(x, loc=centre, scale=fwhm / 2)
    return stats.norm.cdf(x, loc=centre, scale=fwhm / (2 * math.sqrt(2 * math.log(2))))


def test_jcamp_files_follow_the_standard_and_hold_the_line_shapes(samples):
    folder, index = samples
    assert len(index["jcamp"]) == 3
    encodings = set()
    for case in index["jcamp"]:
        text = (folder / case["file"]).read_text(encoding="ascii")
        labels, xs, y = read_jcamp(text)
        names = [k for k, _ in labels]
        value = dict(labels)
        # Order: TITLE first, JCAMP-DX second, the rest as the standard lists them, END last.
        assert names[0] == "TITLE" and names[1] == "JCAMP-DX" and names[-1] == "END", case["file"]
        positions = [names.index(k) for k in REQUIRED_ORDER]
        assert positions == sorted(positions), case["file"]
        for k in (".OBSERVE FREQUENCY", ".OBSERVE NUCLEUS", ".SHIFT REFERENCE", ".SOLVENT NAME"):
            assert names.index(k) < names.index("XYDATA"), k
        assert value["JCAMP-DX"] in ("5.01", "4.24")
        assert value["DATA TYPE"] == "NMR SPECTRUM"
        assert value["XUNITS"] == "HZ" and value["YUNITS"] == "ARBITRARY UNITS"
        assert value["XYDATA"] == "(X++(Y..Y))"
        assert value[".OBSERVE NUCLEUS"] == ("^13C" if case["mhz"] < 200 else "^1H")
        encodings.add("difdup" if re.search(r"^[-\d.]+[@A-Ia-i]", text, re.M) else "affn")

        n = int(value["NPOINTS"])
        assert n == case["points"] == len(y)
        mhz = float(value[".OBSERVE FREQUENCY"])
        assert mhz == pytest.approx(case["mhz"], abs=1e-9)
        firstx, lastx = float(value["FIRSTX"]), float(value["LASTX"])
        xfactor, yfactor = float(value["XFACTOR"]), float(value["YFACTOR"])
        deltax = (lastx - firstx) / (n - 1)
        if "DELTAX" in value:
            assert float(value["DELTAX"]) == pytest.approx(deltax, rel=1e-9)
        for first_index, x in xs:
            assert x * xfactor == pytest.approx(firstx + first_index * deltax, abs=1e-5)
        assert float(value["FIRSTY"]) == pytest.approx(y[0] * yfactor, rel=1e-9, abs=1e-300)

        # The ordinates are the sum of the lines, as SciPy computes them.
        ppm = (firstx + np.arange(n) * deltax) * xfactor / mhz
        assert ppm[0] == pytest.approx(case["ppm_high"], abs=1e-9)
        assert ppm[-1] == pytest.approx(case["ppm_low"], abs=1e-9)
        fwhm = case["width_hz"] / mhz
        want = sum(i * shape_pdf(case["shape"], ppm, p, fwhm) for p, i in case["lines"])
        got = y * yfactor
        height = max(i for _, i in case["lines"]) * shape_pdf(case["shape"], 0.0, 0.0, fwhm)
        assert np.max(np.abs(got - want)) <= yfactor / 2 + 3e-6 * height, case["file"]
        # And they enclose what lies inside the axis (trapezoid rule against the CDF).
        step = abs(deltax) / mhz
        area = TRAPEZOID(got, dx=step)
        inside = sum(i * (shape_cdf(case["shape"], case["ppm_high"], p, fwhm) -
                          shape_cdf(case["shape"], case["ppm_low"], p, fwhm)) for p, i in case["lines"])
        assert area == pytest.approx(inside, rel=1e-4), case["file"]
    assert encodings == {"affn", "difdup"}


def is_grey(colour):
    if colour in ("none", None):
        return True
    m = re.fullmatch(r"#([0-9a-fA-F]{2})([0-9a-fA-F]{2})([0-9a-fA-F]{2})", colour)
    return bool(m) and m.group(1).lower() == m.group(2).lower() == m.group(3).lower()


def test_svg_is_well_formed_self_contained_and_neutral(samples):
    folder, index = samples
    text = (folder / index["svg"]["file"]).read_text(encoding="utf-8")
    root = ET.fromstring(text.encode("utf-8"))
    assert root.tag == SVG_NS + "svg"
    assert root.get("version") == "1.1"
    assert float(root.get("width")) > 0 and float(root.get("height")) > 0
    elements = list(root.iter())
    for el in elements:
        assert el.tag.startswith(SVG_NS), el.tag
        assert el.tag != SVG_NS + "script"
        assert el.tag not in (SVG_NS + "image", SVG_NS + "foreignObject", SVG_NS + "a")
        for name, value in el.attrib.items():
            assert not name.lower().startswith("on"), name
            assert "href" not in name, name
            if name in ("fill", "stroke"):
                assert is_grey(value), (el.tag, name, value)
    # The title survives escaping exactly.
    title = root.find(SVG_NS + "title")
    assert title is not None and title.text == index["svg"]["title"]
    drawn = [el for el in elements if el.get("class") == "title"]
    assert drawn and drawn[0].text == index["svg"]["title"]


def test_svg_labels_do_not_overlap_and_the_axis_decreases_to_the_right(samples):
    folder, index = samples
    root = ET.fromstring((folder / index["svg"]["file"]).read_bytes())
    texts = list(root.iter(SVG_NS + "text"))
    labels = [t for t in texts if t.get("class") in ("signal-label", "solvent-label")]
    assert len(labels) == index["svg"]["signals"] + index["svg"]["solvent_peaks"]
    # Vertical labels: each occupies one text height across; none may share it.
    boxes = []
    for t in labels:
        assert re.fullmatch(r"rotate\(-90 [-\d.]+ [-\d.]+\)", t.get("transform"))
        size = float(t.get("font-size"))
        boxes.append((float(t.get("x")) - size, float(t.get("x"))))
    boxes.sort()
    for (a0, a1), (b0, b1) in zip(boxes, boxes[1:]):
        assert b0 >= a1 - 1e-6, (a0, a1, b0, b1)
    # Integral values: horizontal text in rows; boxes in one row must not overlap.
    font = float(root.get("font-size"))
    groups = [g for g in root.iter(SVG_NS + "g") if g.get("class") == "integral-values"]
    assert groups
    rows = {}
    for t in groups[0].iter(SVG_NS + "text"):
        width = len(t.text) * 0.62 * font
        rows.setdefault(t.get("y"), []).append((float(t.get("x")) - width / 2, float(t.get("x")) + width / 2))
    for row in rows.values():
        row.sort()
        for (a0, a1), (b0, b1) in zip(row, row[1:]):
            assert b0 >= a1 - 1e-6
    # Tick values fall from left to right.
    ticks = [g for g in root.iter(SVG_NS + "g") if g.get("class") == "tick-values"]
    assert ticks
    pairs = sorted((float(t.get("x")), float(t.text)) for t in ticks[0].iter(SVG_NS + "text"))
    assert len(pairs) >= 4
    assert all(b[1] < a[1] for a, b in zip(pairs, pairs[1:]))
