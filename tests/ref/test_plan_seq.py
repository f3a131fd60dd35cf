"""`kweave plan` for the sequences of the planner issue: one command each,
the JSON keys scripts rely on, exit 3 with the nearest feasible protocol,
protocol files, plots, bad input. Outside references: scipy.constants
(CODATA 2018) for gamma-bar, numpy for pi/2 x N, scikit-image for reading the
PNGs back."""
import json
import math
import os
import re

import numpy as np
import pytest
import scipy.constants as sc
from skimage import io as skio

from conftest import run, bad

SAMPLES = os.path.join(os.path.dirname(__file__), "..", "..", "samples")
GBAR = sc.physical_constants["proton gyromag. ratio in MHz/T"][0] * 1e6


def plan(tmp_path, *args, code=0):
    out = tmp_path / "plan.json"
    p = run("plan", *args, "--json", out, check=False)
    assert p.returncode == code, p.stderr
    assert "IEC 60601-2-33" in p.stdout  # the safety caution on every report
    return p, json.loads(out.read_text())




@pytest.mark.parametrize("seq", ["gre", "se", "epi", "radial", "spiral"])
def test_each_sequence_plans_from_one_command(tmp_path, seq):
    p, j = plan(tmp_path, "--sequence", seq, "--fov", "240mm", "--matrix", "128",
                "--bandwidth", "125kHz", "--slice", "4mm")
    for k in ["sequence", "feasible", "min_te_s", "min_tr_s", "readout_duration_s", "dwell_s",
              "chemical_shift_pixels", "limits", "larmor_hz", "pixel_size_m", "delta_k_per_m",
              "k_max_per_m", "bandwidth_hz", "bandwidth_per_pixel_hz",
              "readout_gradient_T_per_m", "polarization"]:
        assert k in j, k
    assert j["sequence"] == seq and j["feasible"] is True
    assert "nearest_feasible" not in j
    for l in j["limits"]:
        assert set(["name", "required", "available", "unit", "ok"]) <= set(l)
        assert l["ok"] is True
    assert j["dwell_s"] == pytest.approx(1 / 125e3, rel=1e-12)
    assert j["min_te_s"] > 0 and j["min_tr_s"] > j["min_te_s"]
    # slice-select G = (TBW / T_rf) / (gamma-bar slice), defaults TBW 4, 2 ms
    assert j["slice_select_gradient_T_per_m"] == pytest.approx((4 / 2e-3) / (GBAR * 4e-3), rel=1e-9)
    if seq == "epi":
        assert "echo_spacing_s" in j and "distortion_pixels_per_hz" in j
        assert j["distortion_pixels_per_hz"] == pytest.approx(128 * j["echo_spacing_s"], rel=1e-12)
    if seq == "radial":
        assert j["spokes_nyquist"] == math.ceil(np.pi / 2 * 128)
    if seq == "spiral":
        assert j["interleaves"] >= 1 and 0 < j["readout_per_interleave_s"] <= 16e-3
        assert j["chemical_shift_pixels"] is None  # a blur, not a shift
    else:
        # readout G = BW / (gamma-bar FOV); chemical shift = 3.4 ppm f0 / (BW/N)
        assert j["readout_gradient_T_per_m"] == pytest.approx(125e3 / (GBAR * 0.24), rel=1e-9)
        assert j["chemical_shift_pixels"] == pytest.approx(3.4e-6 * 3 * GBAR / (125e3 / 128), rel=1e-9)


def test_3d_gre(tmp_path):
    p, j = plan(tmp_path, "--matrix", "128x96x32", "--fov", "256mm,192mm,64mm")
    assert j["pixel_size_m"] == pytest.approx([2e-3, 2e-3, 2e-3])
    assert "partition_encode" in j["lobes"]
    assert j["scan_time_s"] == pytest.approx(96 * 32 * j["tr_s"], rel=1e-12)


def test_infeasible_exit_3_with_nearest(tmp_path):
    # 0.5 mm slice, 2 ms TBW-4 pulse: 4 / (2e-3 gamma-bar 0.5e-3) = 93.9 mT/m > 40 mT/m.
    # Thinnest: 4 / (2e-3 gamma-bar 0.04) = 1.1743 mm -> 1.175 mm
    p, j = plan(tmp_path, "--slice", "0.5mm", "--te", "1ms", code=3)
    assert j["feasible"] is False
    failing = {l["name"] for l in j["limits"] if not l["ok"]}
    assert failing == {"slice_select_gradient", "te"}
    nf = j["nearest_feasible"]
    assert nf["slice_m"] == pytest.approx(math.ceil(4 / (2e-3 * GBAR * 0.04) * 1e6) / 1e6, rel=1e-9)
    assert nf["te_s"] > 1e-3
    c = nf["combined"]
    # the combined protocol re-planned from the command line is feasible
    p2, j2 = plan(tmp_path, "--slice", f"{c['slice_m'] * 1e3:.6f}mm", "--te",
                  f"{c['te_s'] * 1e3:.6f}ms")
    assert j2["feasible"] is True
    assert "Nearest feasible" in p.stdout


def test_readout_nearest_bandwidth(tmp_path):
    # largest bandwidth = gamma-bar gmax FOV = 42.577e6 * 0.01 * 0.05 = 21288.7 Hz -> 21288 Hz
    p, j = plan(tmp_path, "--fov", "50mm", "--matrix", "128", "--bandwidth", "32kHz",
                "--gmax", "10mT/m", "--slice", "10mm", code=3)
    assert j["nearest_feasible"]["bandwidth_hz"] == math.floor(GBAR * 0.01 * 0.05)
    plan(tmp_path, "--fov", "50mm", "--matrix", "128", "--bandwidth",
         f"{j['nearest_feasible']['bandwidth_hz']}Hz", "--gmax", "10mT/m", "--slice", "10mm")


def test_samples_plan(tmp_path):
    for name in sorted(os.listdir(SAMPLES)):
        if not name.endswith(".protocol"):
            continue
        code = 3 if "too-thin" in name else 0
        plan(tmp_path, "--protocol", os.path.join(SAMPLES, name), code=code)


def test_protocol_file_and_override(tmp_path):
    f = tmp_path / "p.protocol"
    f.write_text("# comment\nsequence = epi\n\nfov = 200mm   # trailing comment\nmatrix = 64\n"
                 "bandwidth = 100kHz\nbandwidth = 1562.5Hz/pixel\nshots=2\n")
    _, j = plan(tmp_path, "--protocol", f)
    assert j["sequence"] == "epi" and j["bandwidth_hz"] == pytest.approx(100e3)
    assert j["echo_train_length"] == 32
    _, j = plan(tmp_path, "--protocol", f, "--matrix", "128", "--bandwidth", "64kHz")
    assert j["matrix"] == [128, 128] and j["bandwidth_hz"] == pytest.approx(64e3)


@pytest.mark.parametrize("text,field", [
    ("fov = 256mm\nwobble = 3\n", "wobble"),
    ("fov = 256mm\nfov = 200mm\n", "fov"),
    ("fov 256mm\n", "line 1"),
    ("fov =\n", "fov"),
    ("matrix = 256\nbandwidth = 32kHz\nbandwidth = 250Hz/pixel\n", "bandwidth"),
    ("slice = -2mm\n", "slice"),
    ("te = 0ms\n", "te"),
    ("Fov = 256mm\n", "line 1"),
])
def test_bad_protocol_files(tmp_path, text, field):
    f = tmp_path / "bad.protocol"
    f.write_text(text)
    bad("plan", "--protocol", f, field=field)


def test_missing_protocol_file(tmp_path):
    bad("plan", "--protocol", tmp_path / "nope.protocol", field="nope.protocol")


@pytest.mark.parametrize("args,field", [
    (["--slice", "0mm"], "slice"),
    (["--te", "-3ms"], "te"),
    (["--tr", "0s"], "tr"),
    (["--raster", "0us"], "raster"),
    (["--tbw", "-4"], "tbw"),
    (["--sequence", "epi", "--shots", "3"], "shots"),
    (["--sequence", "epi", "--partial-fourier", "0.4"], "partial-fourier"),
    (["--sequence", "spiral", "--matrix", "256x192"], "matrix"),
    (["--sequence", "radial", "--fov", "256mm,200mm"], "fov"),
    (["--interleaves", "0"], "interleaves"),
    (["--fov", "256mm,192mm,64mm"], "fov"),
    (["--matrix", "128x128x32", "--fov", "256mm,192mm"], "fov"),
    (["--rf-duration", "abc"], "rf-duration"),
])
def test_bad_options(args, field):
    bad("plan", *args, field=field)


def test_plots(tmp_path):
    for seq in ["gre", "se", "epi", "radial", "spiral"]:
        t, k = tmp_path / f"{seq}.png", tmp_path / f"k{seq}.png"
        run("plan", "--sequence", seq, "--fov", "240mm", "--matrix", "64", "--bandwidth",
            "100kHz", "--plot", t, "--kplot", k)
        a, b = skio.imread(t), skio.imread(k)
        assert a.ndim == 3 and a.shape[1] == 1400 and b.shape[:2] == (900, 900)
        assert a.std() > 10 and b.std() > 10  # something was drawn
    # unwritable: exit 2, nothing left behind
    out = tmp_path / "no" / "t.png"
    bad("plan", "--plot", out, field="plot")
    assert not out.exists()


@pytest.mark.parametrize("args,field", [
    (["--fov", "256mm,,192mm"], "fov"),
    (["--sequence", "spiral", "--matrix", "1024", "--interleaves", "1", "--bandwidth", "64kHz"],
     "interleaves"),
    (["--bandwidth", "32kHz", "--bandwidth", "125Hz/pixel", "--bandwidth", "1kHz"], "bandwidth"),
])
def test_more_bad_options(args, field):
    bad("plan", *args, field=field)


def test_relative_snr_against_reference(tmp_path):
    # SNR ~ voxel volume x sqrt(total sampling time) (the usual proportionality):
    # the reference has a 2.5 mm slice and twice the bandwidth, so a 5 mm slice
    # at half its bandwidth has 2 x sqrt(2) its SNR.
    ref = tmp_path / "ref.protocol"
    ref.write_text("slice = 2.5mm\nbandwidth = 500Hz/pixel\n")
    _, j = plan(tmp_path, "--slice", "5mm", "--bandwidth", "250Hz/pixel", "--reference", ref)
    assert j["relative_snr"] == pytest.approx(2 * np.sqrt(2), rel=1e-12)
    _, j = plan(tmp_path)
    assert j["relative_snr"] is None
    bad("plan", "--reference", tmp_path / "missing.protocol", field="reference")


def test_epi_t2star_ratio_uses_the_whole_echo_train(tmp_path):
    """T2* blurring in EPI follows the time the signal decays over while the
    train reads it: the train's duration with ramps and blips (issue 17: the
    ratio was taken from the ADC-on time, 72 x 0.5 ms against a 70.56 ms
    train, and understated the blurring). The SNR's sampling time stays the
    ADC-on time."""
    p, j = plan(tmp_path, "--sequence", "epi", "--fov", "240mm", "--matrix", "96",
                "--bandwidth", "1500Hz/pixel", "--t2star", "50ms")
    assert j["readout_to_t2star"] == pytest.approx(j["echo_train_duration_s"] / 0.05, rel=1e-9)
    adc_on = 96 * 96 * j["dwell_s"]
    assert j["echo_train_duration_s"] > 1.2 * adc_on
    assert "echo train / T2* = " in p.stdout
    p, g = plan(tmp_path, "--sequence", "gre", "--fov", "240mm", "--matrix", "96",
                "--bandwidth", "1500Hz/pixel", "--t2star", "50ms")
    assert g["readout_to_t2star"] == pytest.approx(g["readout_duration_s"] / 0.05, rel=1e-9)
    assert "readout / T2* = " in p.stdout


def test_3d_text_report_gives_the_partition_step(tmp_path):
    """The text gives delta-k and k-max on all three axes of a 3-D protocol,
    the same numbers as the JSON (issue 17: the kz step was missing); the
    step is 1/FOV and k-max N/(2 FOV) on each axis (the sampling relations
    of k-space, Bernstein, King & Zhou 2004, Handbook of MRI Pulse
    Sequences; recalled from memory)."""
    p, j = plan(tmp_path, "--protocol", os.path.join(SAMPLES, "weave-3d-gre.protocol"))
    line = next(l for l in p.stdout.splitlines() if "delta-k" in l)
    nums = [float(x) for x in re.findall(r"[0-9]+\.[0-9]+", line)]
    assert len(nums) == 6, line
    assert nums[:3] == pytest.approx(j["delta_k_per_m"], abs=1e-4)
    assert nums[3:] == pytest.approx(j["k_max_per_m"], abs=1e-3)
    for d, f, n in zip(j["delta_k_per_m"], j["fov_m"], j["matrix"]):
        assert d == pytest.approx(1 / f, rel=1e-12)
    for k, f, n in zip(j["k_max_per_m"], j["fov_m"], j["matrix"]):
        assert k == pytest.approx(n / (2 * f), rel=1e-12)


def test_3d_slab_rephaser_says_it_carries_the_partition_encode(tmp_path):
    """In 3-D the lobe after the slab select is the slab rephaser and the
    largest partition encode played as one (issue 17: it was listed as the
    slice rephaser without saying so). Its area is the sum of the two:
    -G_ss (flat/2 + ramp/2) for the rephaser (refocusing half the excitation,
    the usual small-tip approximation) and -(N_z/2)/(gamma_bar FOV_z) for kz
    (gamma_bar from CODATA 2018 via scipy)."""
    p, j = plan(tmp_path, "--protocol", os.path.join(SAMPLES, "weave-3d-gre.protocol"))
    assert "slab rephaser+kz" in p.stdout and "played as one lobe" in p.stdout
    lob = j["lobes"]
    ss, rp = lob["slice_select"], lob["slice_rephaser"]
    area = lambda l: l["amplitude_T_per_m"] * (l["flat_s"] + l["ramp_s"])
    kz = (j["matrix"][2] / 2) / (GBAR * j["fov_m"][2])
    want = -ss["amplitude_T_per_m"] * (ss["flat_s"] / 2 + ss["ramp_s"] / 2) - kz
    assert area(rp) == pytest.approx(want, rel=1e-6)
    assert area(lob["partition_encode"]) == pytest.approx(-kz, rel=1e-6)
