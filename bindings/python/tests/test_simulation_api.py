"""nmrpred.simulate, Spectrum and Prediction.spectrum through the Python package.

References outside the project:
  * AB quartet, closed form: two spin-1/2 nuclei with shift difference dnu and
    coupling J (Hz) give lines at the centre +-(D+J)/2 and +-(D-J)/2, D =
    sqrt(dnu^2 + J^2), inner/outer intensity (1 + J/D)/(1 - J/D). H. Guenther,
    NMR Spectroscopy, 3rd ed., Wiley 2013, the AB system (from memory).
  * Common practice (any introductory NMR text): coupling between magnetically
    equivalent nuclei does not split their signal (A2 gives one line); a
    first-order AX3 system gives a quartet 1:3:3:1 and a doublet; the ethyl
    group of ethanol gives a triplet (CH3) and a quartet (CH2) with 3J about
    7 Hz (6 to 8 Hz).
  * A Lorentzian line of full width w at half height and area I is
    I (w/2) / (pi ((x - x0)^2 + (w/2)^2)); the sampled spectrum is compared
    with that sum computed by NumPy.
  * JCAMP-DX 5.01 (McDonald & Wilks, Appl. Spectrosc. 1988, 42, 151; NMR
    labels: Davies & Lampen, Appl. Spectrosc. 1993, 47, 1093): ##FIRSTX /
    ##LASTX in Hz, ##NPOINTS, ##.OBSERVE FREQUENCY.
"""

import json
import math
import re

import numpy as np
import pytest

import nmrpred

AB = {"mhz": 400, "spins": [{"shift": 3.0}, {"shift": 3.05}], "couplings": [[0, 1, 10.0]]}


def test_ab_quartet_matches_the_closed_form():
    s = nmrpred.simulate(AB)
    assert s.observe == "1H" and s.field_mhz == 400 and s.observe_mhz == pytest.approx(400)
    dnu, j = 0.05 * 400, 10.0
    d = math.hypot(dnu, j)
    centre = 3.025 * 400
    want_hz = [centre - (d + j) / 2, centre - (d - j) / 2, centre + (d - j) / 2, centre + (d + j) / 2]
    assert s.lines.dtype.names == ("ppm", "hz", "intensity")
    np.testing.assert_allclose(s.lines["hz"], want_hz, atol=1e-3)
    np.testing.assert_allclose(s.lines["ppm"] * 400, s.lines["hz"], atol=1e-6)
    outer, inner = (1 - j / d) / 2, (1 + j / d) / 2
    np.testing.assert_allclose(s.lines["intensity"], [outer, inner, inner, outer], atol=1e-6)
    assert not s.lines.flags.writeable


def test_json_text_and_dict_give_the_same_spectrum_and_overrides_apply():
    a = nmrpred.simulate(AB)
    b = nmrpred.simulate(json.dumps(AB))
    np.testing.assert_array_equal(a.lines, b.lines)
    c = nmrpred.simulate(AB, mhz=100)
    assert c.field_mhz == 100
    # At 100 MHz dnu = 5 Hz < J: the roof effect grows (closed form again).
    d = math.hypot(5.0, 10.0)
    assert c.lines["intensity"][0] == pytest.approx((1 - 10 / d) / 2, abs=1e-6)


def test_equivalent_spins_show_no_splitting():
    s = nmrpred.simulate({"spins": [{"shift": 2.0, "class": 0}, {"shift": 2.0, "class": 0}],
                          "couplings": [[0, 1, 12.0]]})
    assert len(s.lines) == 1
    assert s.lines["intensity"][0] == pytest.approx(2.0)
    assert s.multiplets[0]["label"] == "s"


def test_first_order_ax3_gives_a_doublet_and_a_quartet():
    spins = [{"shift": 6.0}] + [{"shift": 1.5, "class": 1}] * 3
    s = nmrpred.simulate({"spins": spins, "couplings": [[0, k, 7.0] for k in (1, 2, 3)]})
    by_label = {m["label"]: m for m in s.multiplets}
    assert set(by_label) == {"q", "d"}
    q = by_label["q"]
    np.testing.assert_allclose(q["lines"]["intensity"] / q["lines"]["intensity"].min(), [1, 3, 3, 1], atol=1e-3)
    assert q["j_hz"] == pytest.approx([7.0], abs=0.01)
    assert by_label["d"]["integral"] == pytest.approx(3.0)
    assert sorted(by_label["d"]["atoms"]) == [1, 2, 3]


def test_sampling_matches_a_numpy_lorentzian_sum():
    s = nmrpred.simulate(AB)
    ppm, y = s.sample(points=4096, ppm_range=(2.5, 3.5))
    assert ppm[0] == pytest.approx(2.5) and ppm[-1] == pytest.approx(3.5) and len(ppm) == 4096
    w = 1.0 / s.observe_mhz  # 1 Hz default width, in ppm
    want = np.zeros_like(ppm)
    for x0, inten in zip(s.lines["ppm"], s.lines["intensity"]):
        want += inten * (w / 2) / np.pi / ((ppm - x0) ** 2 + (w / 2) ** 2)
    assert np.max(np.abs(y - want)) <= 1e-5 * np.max(want)


def test_gaussian_sampling_keeps_the_area():
    s = nmrpred.simulate(AB)
    ppm, y = s.sample(points=65536, ppm_range=(2.0, 4.0), shape="gaussian", line_width_hz=2.0)
    step = ppm[1] - ppm[0]
    assert y.sum() * step == pytest.approx(2.0, abs=1e-6)


def test_jcamp_and_svg_texts():
    s = nmrpred.simulate(AB)
    text = s.to_jcamp(title="AB demo", points=2048, ppm_range=(2.0, 4.0))
    labels = dict(re.findall(r"^##([^=]+)=\s*(.*)$", text, flags=re.M))
    assert labels["TITLE"] == "AB demo"
    assert labels["JCAMP-DX"].startswith("5.01")
    assert int(labels["NPOINTS"]) == 2048
    assert float(labels[".OBSERVE FREQUENCY"]) == pytest.approx(400, rel=1e-6)
    # The abscissa runs in Hz from the high-ppm end.
    assert float(labels["FIRSTX"]) == pytest.approx(4.0 * 400, rel=1e-6)
    assert float(labels["LASTX"]) == pytest.approx(2.0 * 400, rel=1e-6)
    svg = s.to_svg(title="AB")
    assert svg.lstrip().startswith("<") and "<svg" in svg and svg.rstrip().endswith("</svg>")
    doc = json.loads(s.to_json())
    assert len(doc["lines"]) == 4 and len(doc["multiplets"]) == 2


def test_other_isotopes_sample_but_write_no_files():
    s = nmrpred.simulate({"observe": "19F", "spins": [{"shift": -120.0, "nucleus": "19F"}]})
    assert s.observe == "19F"
    ppm, y = s.sample()
    assert ppm[0] < -120 < ppm[-1]
    with pytest.raises(nmrpred.UnsupportedError):
        s.to_jcamp()


@pytest.mark.parametrize("bad, word", [
    ("{not json", "JSON"),
    ('{"spins": [1.0], "mhz": 1e999}', "range of a double"),  # was an internal error
    ({"spins": [1.0], "colour": 1}, "colour"),
    ({"spins": [1.0, 2.0], "couplings": [[0, -1, 7.0]]}, "negative"),
    ({"spins": [1.0, 2.0], "couplings": [[0, 9, 7.0]]}, "coupling"),
    ({"spins": []}, "spin"),
    ({"spins": [{"shift": 1.0, "nucleus": "17O"}]}, "17O"),
    ({"spins": [1.0], "mhz": -3}, "field"),
])
def test_bad_spin_systems_raise_argument_errors_naming_the_problem(bad, word):
    with pytest.raises(nmrpred.ArgumentError) as e:
        nmrpred.simulate(bad)
    assert word.lower() in str(e.value).lower()
    assert isinstance(e.value, ValueError)


def test_bad_sampling_arguments():
    s = nmrpred.simulate(AB)
    with pytest.raises(nmrpred.ArgumentError):
        s.sample(points=3)
    with pytest.raises(nmrpred.ArgumentError):
        s.sample(ppm_range=(5.0, 1.0))
    with pytest.raises(nmrpred.ArgumentError):
        s.sample(shape="triangle")
    with pytest.raises(TypeError):
        nmrpred.simulate(42)


def test_ethanol_spectrum_has_a_triplet_and_a_quartet():
    p = nmrpred.predict("CCO ethanol")
    h3 = [c for c in p.couplings if {p.attached_to[a] for a in c["atoms"]} == {0, 1}]
    assert len(h3) == 6
    assert all(c["bonds"] == 3 and 6.0 <= c["j_hz"] <= 8.0 for c in h3)
    by_count = {g["count"]: g for g in p.signals["1H"]}
    assert by_count[3]["multiplicity"] == "t" and by_count[2]["multiplicity"] == "q"
    s = p.spectrum("1H", mhz=400)
    labels = {round(m["integral"]): m["label"] for m in s.multiplets}
    assert labels[3] == "t" and labels[2] == "q"
    c13 = nmrpred.Context().spectrum("CCO", nucleus="13C")
    assert c13.observe == "13C" and len(c13.multiplets) == 2
    assert all(m["label"] == "s" for m in c13.multiplets)


def test_prediction_spectrum_errors():
    p = nmrpred.predict("CCO", predict_h1=False)
    with pytest.raises(nmrpred.ArgumentError):
        p.spectrum("1H")
    with pytest.raises(nmrpred.ArgumentError):
        p.spectrum("19F")
    with pytest.raises(nmrpred.ArgumentError):
        p.spectrum("13C", mhz=5)


def test_couplings_and_multiplicities_match_the_record_json():
    p = nmrpred.predict("CC(O)c1ccncc1")
    rec = json.loads(p.to_json())
    assert rec["couplings"] == p.couplings
    assert rec["signals"] == p.signals
    off = nmrpred.predict("CC(O)c1ccncc1", predict_couplings=False)
    assert off.couplings == []
    assert all("multiplicity" not in g for g in off.signals["1H"])
