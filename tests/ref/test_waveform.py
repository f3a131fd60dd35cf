"""`kweave waveform`: a gradient waveform of one's own, checked against
references outside kweave: k(t) and the moments against scipy's
integrators on the piecewise-linear waveform, the trajectory of a radial
waveform against the one `kweave pattern` writes (and both through encode
and recon), violations located to the sample, the nerve-stimulation figure
against its formula, and bad input."""
import json

import numpy as np
import pytest
from scipy import integrate

from conftest import bad, run

GAMMA_BAR = 42.577478518e6  # Hz/T, CODATA 2018
H = 10e-6


def trap(n, s, r, f, a):
    """A trapezoid of amplitude a: ramp from sample s over r samples, flat f."""
    g = np.zeros(n)
    k = np.arange(2 * r + f + 1)
    g[s:s + 2 * r + f + 1] += np.where(k <= r, a * k / r, np.where(k <= r + f, a, a * (2 * r + f - k) / r))
    return g


def smooth_waveform(n=240, axes=2, seed=3):
    """A float32-exact waveform that starts and ends at 0 (no limit cares)."""
    rng = np.random.default_rng(seed)
    g = np.cumsum(rng.normal(0, 4e-4, (n, axes)), axis=0)
    g -= np.linspace(0, 1, n)[:, None] * g[-1]
    g[0] = g[-1] = 0
    return g.astype(np.float32)


def g_of(g, t):
    """G at times t (linear between samples i H)."""
    ts = np.arange(len(g)) * H
    return np.interp(t, ts, g)


def test_kspace_and_moments_against_scipy(tmp_path):
    g = smooth_waveform()
    np.save(tmp_path / "g.npy", g)
    rf, te = 15e-6, 1.5e-3  # the RF centre between samples
    adc = "0.3ms:100:5us,1.4ms:20:10us"
    run("waveform", "--in", tmp_path / "g.npy", "--rf-centre", "15us", "--te", "1.5ms", "--adc", adc,
        "--fov", "200mm,300mm", "--json", tmp_path / "r.json", "--trajectory", tmp_path / "k.npy")
    k = np.load(tmp_path / "k.npy")
    t = np.load(tmp_path / "k_times.npy")
    rep = json.load(open(tmp_path / "r.json"))
    # sample times after the RF centre
    want_t = np.concatenate([0.3e-3 + 5e-6 * np.arange(100), 1.4e-3 + 10e-6 * np.arange(20)]) - rf
    np.testing.assert_allclose(t, want_t, rtol=1e-6, atol=1e-12)
    # k = gamma_bar FOV integral from the RF centre: scipy's cumulative
    # trapezoid rule on a 2.5 us grid holding every sample and every ADC
    # time (exact for the piecewise-linear waveform)
    fine = np.arange(0, (len(g) - 1) * H + 1e-12, 2.5e-6)
    for a, fov in enumerate((0.2, 0.3)):
        m0 = integrate.cumulative_trapezoid(g_of(g[:, a].astype(np.float64), fine), fine, initial=0)
        m0 -= np.interp(rf, fine, m0)
        ref = GAMMA_BAR * fov * np.interp(want_t + rf, fine, m0)
        scale = np.abs(ref).max()
        assert np.abs(k[:, a] - ref).max() < 1e-6 * scale, (a, np.abs(k[:, a] - ref).max(), scale)
    # moments at TE: scipy's Gauss-Legendre rule of 3 points interval by
    # interval (exact for the cubic G(t) (t - t_rf)^2 on each)
    for a in range(2):
        for n, key in enumerate(("m0_T_s_per_m", "m1_T_s2_per_m", "m2_T_s3_per_m")):
            f = lambda x: g_of(g[:, a].astype(np.float64), x) * (x - rf) ** n
            edges = np.concatenate([[rf], np.arange(2, 152) * H, [rf + te]])
            ref = sum(integrate.fixed_quad(f, lo, hi, n=3)[0] for lo, hi in zip(edges[:-1], edges[1:]))
            got = rep["echo"][key][a]
            assert abs(got - ref) <= 1e-12 * abs(ref), (a, n, got, ref)
    assert rep["adc"][0]["centre_s"] == pytest.approx(0.3e-3 + 50 * 5e-6 - rf, rel=1e-12)
    assert rep["safety_caution"].startswith("Caution:")


def radial_waveform(spokes, n, fov, turn=np.pi):
    """Spokes at s pi / S: prephaser, readout (dwell = raster, G = 1 /
    (gamma_bar FOV dwell): one cycle/FOV per sample), rewinder; ADC on the
    flat top, sample n/2 at k = 0."""
    gr = 1 / (GAMMA_BAR * fov * H)
    r, fp = 10, n // 2 - 5
    seg = 2 * (2 * r + fp + 1) + 2 * r + n + 1 + 10
    tot = 20 + spokes * seg
    g = np.zeros((tot, 2))
    adc = []
    for s in range(spokes):
        th = turn * s / spokes
        s0 = 20 + s * seg
        s2 = s0 + 2 * r + fp + 1
        b = trap(tot, s0, r, fp, -gr) + trap(tot, s2, r, n, gr) + trap(tot, s2 + 2 * r + n + 1, r, fp, -gr)
        g[:, 0] += b * np.cos(th)
        g[:, 1] += b * np.sin(th)
        adc.append({"start_sample": s2 + r, "samples": n, "dwell_s": H})
    return g, adc


def test_radial_waveform_traces_the_pattern_trajectory(tmp_path):
    """The spokes of a radial waveform land where `kweave pattern --kind
    radial` puts them (k_n = (n - N/2)(cos, sin) theta_s, theta_s = s pi /
    S; kw_traj.h), within float rounding; encode and recon take the file
    and give the pattern's image."""
    g, adc = radial_waveform(32, 64, 0.256)
    np.save(tmp_path / "rad.npy", g)  # float64, read as float32
    json.dump({"raster_s": H, "rf_centre_s": 5 * H, "adc": adc}, open(tmp_path / "rad.json", "w"))
    run("waveform", "--in", tmp_path / "rad.npy", "--trajectory", tmp_path / "kw.npy", "--json",
        tmp_path / "r.json")
    run("pattern", "--kind", "radial", "--matrix", "64x64", "--spokes", "32", "--out", tmp_path / "kp.npy")
    kw, kp = np.load(tmp_path / "kw.npy"), np.load(tmp_path / "kp.npy")
    assert kw.shape == kp.shape == (32 * 64, 2)
    assert np.abs(kw - kp).max() < 1e-4, np.abs(kw - kp).max()
    side = json.load(open(tmp_path / "kw.json"))
    assert side["kind"] == "trajectory" and side["units"] == "cycles/FOV"
    assert side["times"] == "kw_times.npy"
    imgs = []
    for name in ("kw", "kp"):
        run("encode", "--phantom", "shepp-logan", "--matrix", "64x64", "--fov", "256mm", "--trajectory",
            tmp_path / f"{name}.npy", "--out", tmp_path / f"ks_{name}.npy")
        run("recon", "--in", tmp_path / f"ks_{name}.npy", "--out", tmp_path / f"im_{name}.npy")
        imgs.append(np.load(tmp_path / f"im_{name}.npy"))
    assert np.linalg.norm(imgs[0] - imgs[1]) < 1e-3 * np.linalg.norm(imgs[1])
    rep = json.load(open(tmp_path / "r.json"))
    assert rep["within_limits"] is True and rep["violations"] == []
    # every spoke: M0 = 0 at the ADC centre (k = 0)
    for w in rep["adc"]:
        assert max(abs(v) for v in w["m0_T_s_per_m"]) < 1e-12


def test_violations_located_to_the_sample(tmp_path):
    """x: 50 mT/m with 10-sample ramps (5 mT/m a sample) under 40 mT/m:
    samples s+9 .. s+2r+f-9 over (s+8 is exactly 40); its ramps at 500
    T/m/s over 150."""
    n, s, r, f = 120, 20, 10, 30
    g = np.zeros((n, 1))
    g[:, 0] = trap(n, s, r, f, -50e-3)
    np.save(tmp_path / "g.npy", g)
    run("waveform", "--in", tmp_path / "g.npy", "--rf-centre", "0s", "--json", tmp_path / "r.json",
        "--png", tmp_path / "g.png")
    rep = json.load(open(tmp_path / "r.json"))
    v = rep["violations"]
    assert [x["limit"] for x in v] == ["amplitude", "slew", "slew"]
    assert (v[0]["first"], v[0]["last"]) == (s + 9, s + 2 * r + f - 9)
    assert v[0]["excess"] == pytest.approx(10e-3, rel=1e-6)
    assert (v[1]["first"], v[1]["last"]) == (s, s + r - 1)
    assert (v[2]["first"], v[2]["last"]) == (s + r + f, s + 2 * r + f - 1)
    assert v[1]["peak"] == pytest.approx(500, rel=1e-5)
    assert rep["within_limits"] is False
    png = open(tmp_path / "g.png", "rb").read()
    assert png[:8] == b"\x89PNG\r\n\x1a\n"
    w, h = int.from_bytes(png[16:20], "big"), int.from_bytes(png[20:24], "big")
    assert (w, h) == (1200, 56 + 2 * 150 + 46 + 60)


def test_pns_estimate_against_the_formula(tmp_path):
    """dB/dt of a trapezoid ramp = slew x radius; the limit 0.8 x 20 T/s x
    (1 + 0.36 ms / t) (IEC 60601-2-33 normal mode, values from memory) at
    ramp times 0.1, 0.2 and 0.5 ms: 73.6, 44.8 and 27.52 T/s (by hand)."""
    for r, lim in ((10, 73.6), (20, 44.8), (50, 27.52)):
        n = 2 * r + 40
        g = trap(n, 10, r, 10, 15e-3)[:, None]
        np.save(tmp_path / "g.npy", g)
        run("waveform", "--in", tmp_path / "g.npy", "--rf-centre", "0s", "--pns-radius", "0.3m",
            "--json", tmp_path / "r.json")
        p = json.load(open(tmp_path / "r.json"))["pns"]
        slew = 15e-3 / (r * H)
        assert p["estimate"] is True and "memory" in p["source"]
        assert len(p["ramps"]) == 2
        for ramp in p["ramps"]:
            assert ramp["duration_s"] == pytest.approx(r * H, rel=1e-9)
            assert ramp["dbdt_T_per_s"] == pytest.approx(slew * 0.3, rel=1e-5)
            assert ramp["limit_T_per_s"] == pytest.approx(lim, rel=1e-12)
            assert ramp["percent"] == pytest.approx(100 * slew * 0.3 / lim, rel=1e-5)


def test_text_report_names_the_estimate_and_caution(tmp_path):
    np.save(tmp_path / "g.npy", trap(60, 5, 10, 10, 10e-3)[:, None])
    out = run("waveform", "--in", tmp_path / "g.npy", "--rf-centre", "0s").stdout
    assert "ESTIMATE" in out and "from memory" in out
    assert "Caution: gradient amplitude" in out
    assert "limits 40 mT/m, 150 T/m/s (per axis): within" in out


def refused(*args, opt):
    """exit 2, one line naming the option (as "--opt:" or "opt:")"""
    line = bad(*args)
    assert line.startswith((f"kweave: error: --{opt}:", f"kweave: error: {opt}:")), line
    return line


def test_bad_input_names_the_field_and_writes_nothing(tmp_path):
    g = trap(60, 5, 10, 10, 10e-3)[:, None]
    outs = ["--json", tmp_path / "r.json", "--trajectory", tmp_path / "k.npy", "--png", tmp_path / "p.png"]
    adc = ["--adc", "100us:10:10us"]
    gn = g.copy()
    gn[17, 0] = np.nan
    np.save(tmp_path / "nan.npy", gn)
    line = refused("waveform", "--in", tmp_path / "nan.npy", "--rf-centre", "0s", *adc, *outs, opt="in")
    assert "sample 17" in line
    gi = g.copy()
    gi[3, 0] = np.inf
    np.save(tmp_path / "inf.npy", gi)
    refused("waveform", "--in", tmp_path / "inf.npy", "--rf-centre", "0s", *adc, *outs, opt="in")
    np.save(tmp_path / "g4.npy", np.zeros((60, 4)))
    refused("waveform", "--in", tmp_path / "g4.npy", "--rf-centre", "0s", *adc, *outs, opt="in")
    np.save(tmp_path / "g.npy", g)
    refused("waveform", "--in", tmp_path / "g.npy", *adc, *outs, opt="rf-centre")
    # 7 x 3 us = 21 us: not a whole number of 10 us rasters
    refused("waveform", "--in", tmp_path / "g.npy", "--rf-centre", "0s", "--adc", "100us:7:3us", *outs,
        opt="adc")
    refused("waveform", "--in", tmp_path / "g.npy", "--rf-centre", "0s", "--adc", "105us:10:10us", *outs,
        opt="adc")
    refused("waveform", "--in", tmp_path / "g.npy", "--rf-centre", "0s", "--adc", "100us:ten:10us", *outs,
        opt="adc")
    refused("waveform", "--in", tmp_path / "g.npy", "--rf-centre", "0s", "--trajectory", tmp_path / "k.npy",
        opt="trajectory")
    # the sidecar's windows are checked alike
    json.dump({"rf_centre_s": 0, "adc": [{"start_s": 1e-4, "samples": 7, "dwell_s": 3e-6}]},
              open(tmp_path / "g.json", "w"))
    refused("waveform", "--in", tmp_path / "g.npy", *outs, opt="adc")
    json.dump({"rf_centre_s": "soon"}, open(tmp_path / "g.json", "w"))
    refused("waveform", "--in", tmp_path / "g.npy", *outs, opt="sidecar")
    for f in ("r.json", "k.npy", "k_times.npy", "k.json", "p.png"):
        assert not (tmp_path / f).exists(), f


def test_delay_shifts_every_spoke_and_recon_sees_it(tmp_path):
    """A 2 us delay on both axes moves every radial sample back along its
    spoke by gamma_bar G d FOV = 0.2 cycles/FOV (G = 1 / (gamma_bar FOV
    dwell), dwell 10 us): the echo moves by 0.2 samples. The first sample
    of a spoke sits where the delayed ramp still rises (0.198, kw_waveform
    tests). Written in a FOV of 200 mm (k x 200/256, so that the delayed
    spokes stay inside the 64 x 64 grid), the shifts scale alike. Data
    simulated on the actual trajectory and reconstructed with the nominal
    one are worse than with the actual one."""
    g, adc = radial_waveform(128, 64, 0.256)
    np.save(tmp_path / "rad.npy", g)
    json.dump({"raster_s": H, "rf_centre_s": 5 * H, "adc": adc}, open(tmp_path / "rad.json", "w"))
    run("waveform", "--in", tmp_path / "rad.npy", "--delay", "2us", "--fov", "200mm", "--trajectory", tmp_path / "kn.npy",
        "--trajectory-actual", tmp_path / "ka.npy", "--json", tmp_path / "r.json")
    kn, ka = np.load(tmp_path / "kn.npy"), np.load(tmp_path / "ka.npy")
    th = np.repeat(np.pi * np.arange(128) / 128, 64)
    u = np.stack([np.cos(th), np.sin(th)], axis=1)
    d = (kn - ka).reshape(128, 64, 2)
    shift = (d * u.reshape(128, 64, 2)).sum(axis=2)
    sc = 0.2 / 0.256
    assert np.abs(shift[:, 1:] - 0.2 * sc).max() < 2e-4, np.abs(shift[:, 1:] - 0.2 * sc).max()
    assert np.abs(shift[:, 0] - 0.198 * sc).max() < 2e-4
    side = json.load(open(tmp_path / "ka.json"))
    assert side["gradient"] == "actual" and side["delay_s"] == [2e-6, 2e-6]
    assert json.load(open(tmp_path / "r.json"))["actual"]["delay_s"] == [2e-6, 2e-6]
    enc = ["encode", "--phantom", "shepp-logan", "--matrix", "64x64", "--fov", "200mm"]
    run(*enc, "--trajectory", tmp_path / "ka.npy", "--out", tmp_path / "ks.npy", "--truth", tmp_path / "t.npy")
    # --dcf pipe: the radial weights take |k| < 1e-6 as the centre, and k
    # integrated from float32 gradients lands within a few 1e-6 of it
    run("recon", "--in", tmp_path / "ks.npy", "--dcf", "pipe", "--out", tmp_path / "im_act.npy")
    run("recon", "--in", tmp_path / "ks.npy", "--dcf", "pipe", "--trajectory", tmp_path / "kn.npy", "--out",
        tmp_path / "im_nom.npy")
    truth = np.load(tmp_path / "t.npy")

    def nrmse(im):
        im = np.abs(im)
        s = (im * truth).sum() / (im * im).sum()
        return np.linalg.norm(s * im - truth) / np.linalg.norm(truth)
    e_act, e_nom = nrmse(np.load(tmp_path / "im_act.npy")), nrmse(np.load(tmp_path / "im_nom.npy"))
    print(f"delay 2 us: NRMSE nominal-trajectory recon {e_nom:.4f}, actual {e_act:.4f}")
    assert e_nom > e_act * 1.05, (e_nom, e_act)


def test_imperfection_options_are_checked(tmp_path):
    np.save(tmp_path / "g.npy", trap(60, 5, 10, 10, 10e-3)[:, None])
    base = ["waveform", "--in", tmp_path / "g.npy", "--rf-centre", "0s", "--adc", "100us:10:10us"]
    refused(*base, "--delay", "2", opt="delay")
    refused(*base, "--eddy", "2:50us", opt="eddy")
    refused(*base, "--eddy", "0.1:50us", "--lowpass", "20us", opt="eddy")
    refused(*base, "--trajectory-actual", tmp_path / "k.npy", opt="trajectory-actual")
    refused(*base, "--delay", "1s", opt="delay")
    assert not (tmp_path / "k.npy").exists()


@pytest.mark.parametrize("shots", [1, 2])
def test_epi_waveform_imported_back_is_the_pattern(tmp_path, shots):
    """`kweave pattern --kind epi --waveform` writes shot 0's gradients
    (float32) and timing; `kweave waveform` on them gives back the
    trajectory the pattern writes for that shot (the planner's grid points,
    kw_gradient.h) within float rounding."""
    run("pattern", "--kind", "epi", "--matrix", "32x32", "--dwell", "10us", "--shots", shots,
        "--out", tmp_path / "epi.npy", "--waveform", tmp_path / "g.npy")
    side = json.load(open(tmp_path / "g.json"))
    assert side["rf_centre_s"] == 0 and side["safety_caution"].startswith("Caution")
    run("waveform", "--in", tmp_path / "g.npy", "--trajectory", tmp_path / "k.npy", "--json", tmp_path / "r.json")
    kp = np.load(tmp_path / "epi.npy")
    k = np.load(tmp_path / "k.npy")
    assert k.shape[0] * shots == kp.shape[0]
    assert np.abs(k - kp[:k.shape[0]]).max() < 1e-4, np.abs(k - kp[:k.shape[0]]).max()
    assert json.load(open(tmp_path / "r.json"))["within_limits"] is True


def test_spiral_waveform_imported_back_is_the_pattern(tmp_path):
    """The same for the spiral (interleaf 0; its design holds each value
    over a raster, the sidecar says "held": true)."""
    run("pattern", "--kind", "spiral", "--matrix", "32x32", "--dwell", "10us", "--interleaves", "4",
        "--out", tmp_path / "sp.npy", "--waveform", tmp_path / "g.npy")
    assert json.load(open(tmp_path / "g.json"))["held"] is True
    run("waveform", "--in", tmp_path / "g.npy", "--trajectory", tmp_path / "k.npy", "--json", tmp_path / "r.json")
    kp, k = np.load(tmp_path / "sp.npy"), np.load(tmp_path / "k.npy")
    assert 4 * k.shape[0] == kp.shape[0]
    assert np.abs(k - kp[:k.shape[0]]).max() < 1e-4, np.abs(k - kp[:k.shape[0]]).max()
    rep = json.load(open(tmp_path / "r.json"))
    assert rep["held"] is True and rep["within_limits"] is True


def test_pattern_waveform_only_for_epi_and_spiral(tmp_path):
    refused("pattern", "--kind", "radial", "--matrix", "32x32", "--waveform", tmp_path / "g.npy", opt="waveform")
    assert not (tmp_path / "g.npy").exists()
    np.save(tmp_path / "h.npy", trap(60, 5, 10, 10, 10e-3)[:, None])
    refused("waveform", "--in", tmp_path / "h.npy", "--rf-centre", "0s", "--held", "--delay", "1s", opt="delay")


def test_held_waveform_through_lowpass_and_delay_against_scipy(tmp_path):
    """A held (zero-order hold) waveform with --lowpass 20us --delay 20us:
    the actual k against scipy.signal.lsim of 1 / (tau s + 1) with
    interp=False (scipy's zero-order hold: the input held between samples,
    exact for a held waveform), the integral of the output = integral of
    the input - tau y (tau y' = x - y), shifted by 2 rasters; the held
    input's integral is the sum of G dt. float32 k: atol 2e-6 x max |k|.
    The report says the slew is raster-limited."""
    from scipy import signal
    rng = np.random.default_rng(11)
    n = 120
    g = np.zeros(n)
    g[5:100] = np.repeat(rng.uniform(-20e-3, 20e-3, 19), 5)  # steps of 5 rasters
    g32 = g.astype(np.float32)
    np.save(tmp_path / "g.npy", g32[:, None])
    rf, adc0, nadc, tau, d = 20e-6, 10, 100, 20e-6, 2
    out = run("waveform", "--in", tmp_path / "g.npy", "--held", "--rf-centre", "20us", "--adc",
              f"{adc0}:{nadc}:10us", "--lowpass", "20us", "--delay", "20us", "--trajectory-actual",
              tmp_path / "k.npy", "--json", tmp_path / "r.json").stdout
    k = np.load(tmp_path / "k.npy")[:, 0].astype(np.float64)
    x = g32.astype(np.float64)
    t = np.arange(n + 1) * H
    xe = np.append(x, 0.0)  # the last value is held over [t_(n-1), t_n)
    _, y, _ = signal.lsim(([1.0], [tau, 1.0]), xe, t, interp=False)
    i_in = np.concatenate([[0.0], np.cumsum(x * H)])  # sum of G dt
    i_act = i_in - tau * y
    i_del = np.concatenate([np.zeros(d), i_act[:-d]])
    ref = GAMMA_BAR * 0.256 * (i_del[adc0:adc0 + nadc] - i_del[int(round(rf / H))])
    np.testing.assert_allclose(k, ref, rtol=0, atol=2e-6 * np.max(np.abs(ref)))
    rep = json.load(open(tmp_path / "r.json"))
    assert rep["held"] is True and rep["slew_model"].startswith("raster-limited")
    assert "raster-limited" in out


def test_delay_estimated_from_simulated_radial_data(tmp_path):
    """Peters et al. 2003 through the command: 64 spokes over 360 degrees
    (spoke s opposed to s + 32), data simulated by encode on the trajectory
    of a 2 us delay; the estimate from the data and the nominal waveform is
    within 0.2 us of 2 us (the issue's bound, noise-free)."""
    g, adc = radial_waveform(64, 64, 0.256, turn=2 * np.pi)
    np.save(tmp_path / "rad.npy", g)
    json.dump({"raster_s": H, "rf_centre_s": 5 * H, "adc": adc}, open(tmp_path / "rad.json", "w"))
    run("waveform", "--in", tmp_path / "rad.npy", "--delay", "2us", "--fov", "200mm",
        "--trajectory-actual", tmp_path / "ka.npy")
    run("encode", "--phantom", "shepp-logan", "--matrix", "64x64", "--fov", "200mm", "--trajectory",
        tmp_path / "ka.npy", "--out", tmp_path / "ks.npy")
    out = run("waveform", "--in", tmp_path / "rad.npy", "--estimate-delay", tmp_path / "ks.npy", "--json",
              tmp_path / "r.json").stdout
    est = json.load(open(tmp_path / "r.json"))["delay_estimate"]["delay_s"]
    print(f"delay 2 us estimated as {est * 1e6:.4f} us")
    assert abs(est - 2e-6) < 0.2e-6, est
    assert "Peters et al. 2003" in out
    # an odd number of windows cannot pair spokes
    json.dump({"raster_s": H, "rf_centre_s": 5 * H, "adc": adc[:-1]}, open(tmp_path / "rad.json", "w"))
    refused("waveform", "--in", tmp_path / "rad.npy", "--estimate-delay", tmp_path / "ks.npy", opt="estimate-delay")


def test_per_axis_delays_estimated_from_simulated_radial_data(tmp_path):
    """Per-axis delays (dx = 2 us, dy = -1 us) put in with --delay 2us,-1us,
    encode's Shepp-Logan data on the actual trajectory (64 spokes over 360
    degrees), estimated back by the least-squares fit of each pair's echo
    shift d(theta) = dx cos^2 + dy sin^2 (the derivation in
    docs/waveform.md; the per-pair shift by Peters et al. 2003): within
    0.2 us per axis (the task's bound, noise-free). The one-delay estimate
    of the same data sits near the mean of d(theta) over the circle,
    (dx + dy) / 2 = 0.5 us (within 0.2 us). The estimate runs before any
    output is written: a bad k-space file leaves no trajectory behind."""
    g, adc = radial_waveform(64, 64, 0.256, turn=2 * np.pi)
    np.save(tmp_path / "rad.npy", g)
    json.dump({"raster_s": H, "rf_centre_s": 5 * H, "adc": adc}, open(tmp_path / "rad.json", "w"))
    run("waveform", "--in", tmp_path / "rad.npy", "--delay", "2us,-1us", "--fov", "200mm",
        "--trajectory-actual", tmp_path / "ka.npy")
    run("encode", "--phantom", "shepp-logan", "--matrix", "64x64", "--fov", "200mm", "--trajectory",
        tmp_path / "ka.npy", "--out", tmp_path / "ks.npy")
    out = run("waveform", "--in", tmp_path / "rad.npy", "--estimate-delay", tmp_path / "ks.npy", "--json",
              tmp_path / "r.json").stdout
    de = json.load(open(tmp_path / "r.json"))["delay_estimate"]
    dx, dy = de["per_axis_delay_s"]
    print(f"dx 2 us, dy -1 us estimated as {dx * 1e6:.4f}, {dy * 1e6:.4f} us; one delay {de['delay_s'] * 1e6:.4f} us")
    assert abs(dx - 2e-6) < 0.2e-6 and abs(dy + 1e-6) < 0.2e-6, (dx, dy)
    assert abs(de["delay_s"] - 0.5e-6) < 0.2e-6
    assert "least squares" in de["per_axis_method"] and "per axis" in out
    np.save(tmp_path / "bad.npy", np.zeros((3, 7), np.complex64))
    refused("waveform", "--in", tmp_path / "rad.npy", "--estimate-delay", tmp_path / "bad.npy",
            "--trajectory", tmp_path / "kn.npy", "--json", tmp_path / "r2.json", opt="estimate-delay")
    for name in ("kn.npy", "kn_times.npy", "kn.json", "r2.json"):
        assert not (tmp_path / name).exists(), name


def test_several_rf_centres_restart_k_against_scipy(tmp_path):
    """--rf-centres: three excitations in one waveform (a smooth 2-axis
    waveform, RF centres at 0.1, 0.9 and 1.7 ms, an ADC window after each):
    k at the ADC samples against scipy's cumulative trapezoid rule (exact
    for the piecewise-linear waveform) restarted from 0 at each centre; the
    moments at each window's centre against scipy's Gauss-Legendre rule
    (integrate.fixed_quad, exact for the piecewise cubic integrand when run
    interval by interval) from the window's own centre; the JSON lists the
    centres and an echo per excitation. Bad centres: exit 2 naming
    --rf-centres, nothing written."""
    g = smooth_waveform(n=260, axes=2, seed=9)
    np.save(tmp_path / "g.npy", g)
    rf = [100e-6, 900e-6, 1700e-6]
    starts = [20, 100, 180]
    adc = ",".join(f"{s}:40:10us" for s in starts)
    run("waveform", "--in", tmp_path / "g.npy", "--rf-centres", "100us,900us,1.7ms", "--te", "300us", "--adc", adc,
        "--trajectory", tmp_path / "k.npy", "--json", tmp_path / "r.json")
    k = np.load(tmp_path / "k.npy")
    t = np.arange(len(g)) * H
    gd = g.astype(np.float64)
    for w, (s0, c) in enumerate(zip(starts, rf)):
        ts = (s0 + np.arange(40)) * H
        for a in range(2):
            # the running integral from 0, then from the centre: both on the
            # fine grid with the centre inserted (its value interpolated)
            tt = np.sort(np.concatenate([t, [c]]))
            gg = np.interp(tt, t, gd[:, a])
            m0 = integrate.cumulative_trapezoid(gg, tt, initial=0)
            ref = GAMMA_BAR * 0.256 * (np.interp(ts, tt, m0) - np.interp(c, tt, m0))
            np.testing.assert_allclose(k[w * 40:(w + 1) * 40, a], ref, rtol=0, atol=1e-5 * max(1, np.abs(ref).max()))
    rep = json.load(open(tmp_path / "r.json"))
    assert rep["rf_centres_s"] == rf and len(rep["echoes"]) == 3
    for w, (s0, c) in enumerate(zip(starts, rf)):
        tc = (s0 + 20) * H
        for a in range(2):
            for m, key in enumerate(["m0_T_s_per_m", "m1_T_s2_per_m", "m2_T_s3_per_m"]):
                edges = np.concatenate([[c], t[(t > c) & (t < tc)], [tc]])
                val = sum(integrate.fixed_quad(lambda x: g_of(gd[:, a], x) * (x - c) ** m, lo, hi, n=3)[0]
                          for lo, hi in zip(edges[:-1], edges[1:]))
                got = rep["adc"][w][key][a]
                assert abs(got - val) <= 1e-9 * max(abs(val), 1e-3 * H ** (m + 1) * 1e-3), (w, a, key, got, val)
    outs = ["--trajectory", tmp_path / "kb.npy", "--json", tmp_path / "rb.json"]
    base = ["waveform", "--in", tmp_path / "g.npy", "--adc", "20:40:10us"]
    assert "increase" in refused(*base, "--rf-centres", "100us,50us", *outs, opt="rf-centres")
    refused(*base, "--rf-centres", "100us,5s", *outs, opt="rf-centres")
    refused(*base, "--rf-centres", "100us,3", *outs, opt="rf-centres")
    refused(*base, "--rf-centre", "90us", "--rf-centres", "100us,900us", *outs, opt="rf-centres")
    refused(*base, "--rf-centres", "100us,300us", *outs, opt="adc")  # the window 200-590 us holds 300 us
    for name in ("kb.npy", "kb_times.npy", "kb.json", "rb.json"):
        assert not (tmp_path / name).exists(), name


def test_plan_lobes_exported_and_read_back(tmp_path):
    """`kweave plan --waveform`: the gradient-echo plan's lobes as a
    waveform (x readout, y phase encode at its largest step, z slice) with
    a sidecar `kweave waveform` reads. Its trajectory is the Cartesian
    line the plan reads (the k-space definition: the readout steps one
    cycle/FOV per dwell, kx = j - N/2, and the largest phase step is
    ky = -N/2 cycles/FOV, M0_y = -N / (2 gamma_bar FOV), CODATA gamma_bar);
    at TE M0_x = 0 (the prephaser is minus half the readout) and M0_z = 0
    (the rephaser undoes the slice select after the RF centre). plan's
    outputs without --waveform stay as they were (the golden test); a spin
    echo or a readout off the raster: exit 2 naming --waveform, nothing
    written."""
    plan = ["plan", "--matrix", "256", "--fov", "256mm", "--bandwidth", "100kHz"]
    run(*plan, "--waveform", tmp_path / "pw.npy", "--json", tmp_path / "plan.json")
    side = json.load(open(tmp_path / "pw.json"))
    assert side["kind"] == "waveform" and "safety_caution" in side
    plan_rep = json.load(open(tmp_path / "plan.json"))
    assert abs(side["te_s"] - plan_rep["te_s"]) < 1e-12
    g = np.load(tmp_path / "pw.npy")
    assert g.shape[1] == 3
    run("waveform", "--in", tmp_path / "pw.npy", "--trajectory", tmp_path / "k.npy", "--json", tmp_path / "r.json")
    k = np.load(tmp_path / "k.npy")
    np.testing.assert_allclose(k[:, 0], np.arange(256) - 128, rtol=0, atol=2e-3)
    np.testing.assert_allclose(k[:, 1], -128, rtol=0, atol=2e-3)
    np.testing.assert_allclose(k[:, 2], k[0, 2], rtol=0, atol=1e-3)  # no slice-direction motion on the flat top
    rep = json.load(open(tmp_path / "r.json"))
    e = rep["echo"]
    assert abs(e["m0_T_s_per_m"][1] - (-128 / (GAMMA_BAR * 0.256))) < 1e-6 * 128 / (GAMMA_BAR * 0.256)
    gr = 1 / (GAMMA_BAR * 0.256 * 10e-6)  # the readout: one cycle/FOV per 10 us
    assert abs(e["m0_T_s_per_m"][0]) < 1e-6 * gr * 256 * 10e-6
    assert abs(e["m0_T_s_per_m"][2]) < 1e-6 * gr * 256 * 10e-6
    outs = ["--waveform", tmp_path / "bad.npy", "--json", tmp_path / "bad.json", "--plot", tmp_path / "bad.png"]
    refused("plan", "--sequence", "se", "--matrix", "256", "--bandwidth", "100kHz", *outs, opt="waveform")
    refused("plan", "--matrix", "250", "--bandwidth", "33kHz", *outs, opt="waveform")
    for name in ("bad.npy", "bad.json", "bad.png"):
        assert not (tmp_path / name).exists(), name


def test_csv_table_reads_as_the_npy(tmp_path):
    """The same waveform as a text table (header, comments) and as .npy
    (float32) gives the same report."""
    g = smooth_waveform(n=80, axes=3)
    np.save(tmp_path / "g.npy", g)
    with open(tmp_path / "g.csv", "w") as f:
        f.write("# my waveform, T/m\nx,y,z\n")
        for row in g:
            f.write(",".join(repr(float(v)) for v in row) + "\n")
    reps = []
    for name in ("g.npy", "g.csv"):
        run("waveform", "--in", tmp_path / name, "--rf-centre", "20us", "--te", "0.5ms", "--json",
            tmp_path / (name + ".json"))
        reps.append(json.load(open(tmp_path / (name + ".json"))))
    assert reps[0]["echo"] == reps[1]["echo"]
    assert reps[0]["peak_G_T_per_m"] == reps[1]["peak_G_T_per_m"]
    with open(tmp_path / "bad.csv", "w") as f:
        f.write("0,0\n1e-3\n")
    refused("waveform", "--in", tmp_path / "bad.csv", "--rf-centre", "0s", "--json", tmp_path / "r.json", opt="in")
    assert not (tmp_path / "r.json").exists()


# ---- the actual gradient through a measured GIRF (--girf) ----


def girf_file(path, f, hs):
    """The --girf table: complex (frequencies, 1 + axes), column 0 f in Hz."""
    np.save(path, np.column_stack([np.asarray(f, np.complex128)] + [np.asarray(h) for h in hs]).astype(np.complex64))


def readout_waveform():
    """Prephaser and readout (ramps 100 us, one cycle/FOV per 10 us in 256
    mm) on x, a smaller lobe on y; ADC on the readout's flat top."""
    gr = 1.0 / (GAMMA_BAR * 0.256 * H)
    n = 10 + 20 + 59 + 20 + 128 + 20 + 20
    gx = trap(n, 10, 10, 59, -gr) + trap(n, 109, 10, 128, gr)
    gy = trap(n, 30, 15, 40, 0.3 * gr)
    return np.column_stack([gx, gy]).astype(np.float32), "1190us:128:10us"


def actual_k(tmp_path, g, adc, *imperfection, name="k"):
    np.save(tmp_path / "g.npy", g)
    run("waveform", "--in", tmp_path / "g.npy", "--rf-centre", "50us", "--adc", adc, *imperfection,
        "--trajectory-actual", tmp_path / f"{name}.npy", "--trajectory", tmp_path / f"{name}_nom.npy")
    return np.load(tmp_path / f"{name}.npy").astype(np.float64), np.load(tmp_path / f"{name}_nom.npy")


def test_girf_identity_delay_and_lowpass_reproduce_the_closed_forms(tmp_path):
    """H built here in numpy (independently of kweave): H = 1 to the
    raster's Nyquist frequency gives the nominal k (float32 output rounding:
    |k| <= 64, 2e-5); H = exp(-i 2 pi f d), d = 20 us (2 rasters) gives the
    --delay result (the phase interpolated between table points 10 Hz
    apart: <= (2 pi d df)^2 / 8 = 2e-7 relative on G, k within 1e-4);
    H = 1 / (1 + i 2 pi f tau), tau = 20 us (the first-order low-pass's
    transfer function, textbook), gives the --lowpass result within the
    sampling difference of the discrete filter (measured in
    tests/test_waveform.c: k within 1e-3 cycles/FOV at a 10 us raster)."""
    g, adc = readout_waveform()
    f = np.linspace(0, 50e3, 5001)
    girf_file(tmp_path / "h1.npy", f, [np.ones_like(f), np.ones_like(f)])
    ka, kn = actual_k(tmp_path, g, adc, "--girf", tmp_path / "h1.npy", name="k1")
    np.testing.assert_allclose(ka, kn, rtol=0, atol=2e-5)
    d = 20e-6
    girf_file(tmp_path / "hd.npy", f, [np.exp(-2j * np.pi * f * d)] * 2)
    kg, _ = actual_k(tmp_path, g, adc, "--girf", tmp_path / "hd.npy", name="kd")
    kc, _ = actual_k(tmp_path, g, adc, "--delay", "20us", name="kdc")
    np.testing.assert_allclose(kg, kc, rtol=0, atol=1e-4)
    assert np.max(np.abs(kg[:, 0] - kn[:, 0])) > 1.9  # the delay moved the echo by 2 samples
    tau = 20e-6
    girf_file(tmp_path / "hl.npy", f, [1 / (1 + 2j * np.pi * f * tau)] * 2)
    kg, _ = actual_k(tmp_path, g, adc, "--girf", tmp_path / "hl.npy", name="kl")
    kc, _ = actual_k(tmp_path, g, adc, "--lowpass", "20us", name="klc")
    np.testing.assert_allclose(kg, kc, rtol=0, atol=1e-3)
    side = json.load(open(tmp_path / "kl.json"))
    assert side["gradient"] == "actual" and side["girf"]["band_Hz"] == [0, 50e3]


def test_girf_against_numpy_fft_filter(tmp_path):
    """A coarse table (40 frequencies from 2 kHz to 30 kHz, below the
    Nyquist frequency 50 kHz) of a lag with a resonance, on a smooth
    2-axis waveform: the actual k against numpy's own filter: rfft of the
    samples zero-padded to the next power of 2 >= 2 n, H interpolated
    linearly (real and imaginary parts) on the two-sided table (conj H(f)
    at -f, which makes the rule below the first frequency), H = 0 above
    30 kHz, irfft, then k = gamma_bar FOV x the trapezoid integral from the
    RF centre (scipy, exact for the piecewise-linear actual gradient).
    Float32 k (and H read back as stored, complex64): atol 2e-6 x max |k|
    (measured 3.5e-8; holding the last value instead of H = 0 above the
    band would be off by 2e-4, holding H(f_0) below the first frequency
    instead of the conjugate rule by 0.28 on x)."""
    g = smooth_waveform(n=300, axes=2, seed=5).astype(np.float64)
    g32 = g.astype(np.float32)
    f = np.linspace(2e3, 30e3, 40)
    hx = np.exp(-2j * np.pi * f * 3e-6) / (1 + 2j * np.pi * f * 15e-6)
    hy = 1 + 0.2 * np.exp(-((f - 12e3) / 3e3) ** 2) * np.exp(0.5j)
    girf_file(tmp_path / "h.npy", f, [hx, hy])
    table = np.load(tmp_path / "h.npy")
    np.save(tmp_path / "g.npy", g32)
    rf, adc0, nadc = 100e-6, 40, 200
    run("waveform", "--in", tmp_path / "g.npy", "--rf-centre", "100us", "--adc", f"{adc0}:{nadc}:10us",
        "--girf", tmp_path / "h.npy", "--trajectory-actual", tmp_path / "k.npy", "--json", tmp_path / "r.json")
    k = np.load(tmp_path / "k.npy")
    n = len(g32)
    nf = 1 << int(np.ceil(np.log2(2 * n)))
    fk = np.fft.rfftfreq(nf, H)
    ft = np.real(table[:, 0]).astype(np.float64)
    f2 = np.concatenate([-ft[::-1], ft])
    t = np.arange(n) * H
    for a in range(2):
        h = table[:, 1 + a].astype(np.complex128)
        h2 = np.concatenate([np.conj(h[::-1]), h])
        hk = np.interp(fk, f2, h2.real, right=0) + 1j * np.interp(fk, f2, h2.imag, right=0)
        ga = np.fft.irfft(np.fft.rfft(g32[:, a].astype(np.float64), nf) * hk, nf)[:n]
        m0 = integrate.cumulative_trapezoid(ga, t, initial=0)
        ref = GAMMA_BAR * 0.256 * (m0[adc0:adc0 + nadc] - m0[int(round(rf / H))])
        np.testing.assert_allclose(k[:, a], ref, rtol=0, atol=2e-6 * np.max(np.abs(ref)))
    rep = json.load(open(tmp_path / "r.json"))
    assert rep["actual"]["girf"]["frequencies"] == 40 and rep["actual"]["girf"]["beyond_band"] == "H = 0"


def test_girf_cascade_with_delay_and_lowpass(tmp_path):
    """--girf with --delay / --lowpass: the cascade of the systems (the
    product of their transfer functions; linear and time-invariant, so the
    order does not matter). (1) H = 1 to 50 kHz plus --delay 2us is
    --delay 2us alone (float32 k: 2e-5); (2) H = exp(-i 2 pi f 20us) plus
    --lowpass 20us is --delay 20us --lowpass 20us (the GIRF's delayed
    samples within 2e-7 relative, the low-pass a contraction: k 1e-4);
    (3) a smooth measured-like table with --lowpass 15us --delay 20us
    against references outside kweave: numpy's rfft/irfft filter (the
    rules of test_girf_against_numpy_fft_filter), then scipy.signal.lsim of
    1 / (tau s + 1) on the filtered samples (linear between samples, lsim's
    first-order hold: exact), k from the integral of the low-pass's output
    = integral of its input - tau y (tau y' = x - y), delayed by 2 rasters;
    atol 2e-6 x max |k| (float32 output)."""
    from scipy import signal
    g, adc = readout_waveform()
    f = np.linspace(0, 50e3, 5001)
    girf_file(tmp_path / "h1.npy", f, [np.ones_like(f), np.ones_like(f)])
    kg, _ = actual_k(tmp_path, g, adc, "--girf", tmp_path / "h1.npy", "--delay", "2us", name="k1")
    kc, kn = actual_k(tmp_path, g, adc, "--delay", "2us", name="k1c")
    np.testing.assert_allclose(kg, kc, rtol=0, atol=2e-5)
    assert abs(np.max(np.abs(kg[:, 0] - kn[:, 0])) - 0.2) < 2e-3  # the echo moved by 0.2 samples
    girf_file(tmp_path / "hd.npy", f, [np.exp(-2j * np.pi * f * 20e-6)] * 2)
    kg, _ = actual_k(tmp_path, g, adc, "--girf", tmp_path / "hd.npy", "--lowpass", "20us", name="kd")
    kc, _ = actual_k(tmp_path, g, adc, "--delay", "20us", "--lowpass", "20us", name="kdc")
    np.testing.assert_allclose(kg, kc, rtol=0, atol=1e-4)
    # (3) against numpy + scipy
    g32 = smooth_waveform(n=300, axes=2, seed=7)
    fs = np.linspace(2e3, 30e3, 40)
    hs = [np.exp(-2j * np.pi * fs * 3e-6) / (1 + 2j * np.pi * fs * 15e-6),
          1 + 0.2 * np.exp(-((fs - 12e3) / 3e3) ** 2) * np.exp(0.5j)]
    girf_file(tmp_path / "h.npy", fs, hs)
    table = np.load(tmp_path / "h.npy")
    np.save(tmp_path / "g.npy", g32)
    rf, adc0, nadc, tau, d = 100e-6, 40, 200, 15e-6, 2
    run("waveform", "--in", tmp_path / "g.npy", "--rf-centre", "100us", "--adc", f"{adc0}:{nadc}:10us",
        "--girf", tmp_path / "h.npy", "--lowpass", "15us", "--delay", "20us",
        "--trajectory-actual", tmp_path / "k.npy", "--json", tmp_path / "r.json")
    k = np.load(tmp_path / "k.npy")
    n = len(g32)
    nf = 1 << int(np.ceil(np.log2(2 * n)))
    fk = np.fft.rfftfreq(nf, H)
    ft = np.real(table[:, 0]).astype(np.float64)
    f2 = np.concatenate([-ft[::-1], ft])
    t = np.arange(n) * H
    for a in range(2):
        h = table[:, 1 + a].astype(np.complex128)
        h2 = np.concatenate([np.conj(h[::-1]), h])
        hk = np.interp(fk, f2, h2.real, right=0) + 1j * np.interp(fk, f2, h2.imag, right=0)
        ga = np.fft.irfft(np.fft.rfft(g32[:, a].astype(np.float64), nf) * hk, nf)[:n]
        _, y, _ = signal.lsim(([1.0], [tau, 1.0]), ga, t, interp=True)
        i_act = integrate.cumulative_trapezoid(ga, t, initial=0) - tau * y  # integral of y from 0
        i_del = np.concatenate([np.zeros(d), i_act[:-d]])  # G_act(t) = y(t - 20 us)
        ref = GAMMA_BAR * 0.256 * (i_del[adc0:adc0 + nadc] - i_del[int(round(rf / H))])
        np.testing.assert_allclose(k[:, a], ref, rtol=0, atol=2e-6 * np.max(np.abs(ref)))
    rep = json.load(open(tmp_path / "r.json"))
    assert rep["actual"]["girf"]["frequencies"] == 40 and rep["actual"]["delay_s"] == [20e-6, 20e-6]
    assert rep["actual"]["response_tau_s"] == [15e-6, 15e-6]


def test_girf_cross_axis_terms_against_numpy(tmp_path):
    """--girf with the cross-axis terms: a (frequencies, 1 + 2 x 2) table
    (H_xx, H_xy, H_yx, H_yy; output axis slowest) on a smooth 2-axis
    waveform against numpy's filter with the same rules as
    test_girf_against_numpy_fft_filter, G_act,out = irfft(sum over in of
    rfft(G_in) H_out,in): k within 2e-6 of its largest value (float32)."""
    g32 = smooth_waveform(n=300, axes=2, seed=13)
    f = np.linspace(2e3, 30e3, 40)
    hs = [np.exp(-2j * np.pi * f * 3e-6) / (1 + 2j * np.pi * f * 15e-6),
          0.05 * np.exp(-((f - 8e3) / 4e3) ** 2) * np.exp(0.3j),
          -0.03 * (1 + 0j) * f / 30e3,
          1 + 0.2 * np.exp(-((f - 12e3) / 3e3) ** 2) * np.exp(0.5j)]
    girf_file(tmp_path / "h.npy", f, hs)
    table = np.load(tmp_path / "h.npy")
    np.save(tmp_path / "g.npy", g32)
    rf, adc0, nadc = 100e-6, 40, 200
    run("waveform", "--in", tmp_path / "g.npy", "--rf-centre", "100us", "--adc", f"{adc0}:{nadc}:10us",
        "--girf", tmp_path / "h.npy", "--trajectory-actual", tmp_path / "k.npy", "--json", tmp_path / "r.json")
    k = np.load(tmp_path / "k.npy")
    n = len(g32)
    nf = 1 << int(np.ceil(np.log2(2 * n)))
    fk = np.fft.rfftfreq(nf, H)
    ft = np.real(table[:, 0]).astype(np.float64)
    f2 = np.concatenate([-ft[::-1], ft])
    t = np.arange(n) * H

    def hk(col):
        h = table[:, col].astype(np.complex128)
        h2 = np.concatenate([np.conj(h[::-1]), h])
        return np.interp(fk, f2, h2.real, right=0) + 1j * np.interp(fk, f2, h2.imag, right=0)
    spec = [np.fft.rfft(g32[:, a].astype(np.float64), nf) for a in range(2)]
    for b in range(2):
        ga = np.fft.irfft(sum(spec[a] * hk(1 + 2 * b + a) for a in range(2)), nf)[:n]
        m0 = integrate.cumulative_trapezoid(ga, t, initial=0)
        ref = GAMMA_BAR * 0.256 * (m0[adc0:adc0 + nadc] - m0[int(round(rf / H))])
        np.testing.assert_allclose(k[:, b], ref, rtol=0, atol=2e-6 * np.max(np.abs(ref)))
    rep = json.load(open(tmp_path / "r.json"))
    assert rep["actual"]["girf"]["cross_axis"] is True
    girf_file(tmp_path / "h3.npy", f, hs[:3])  # 1 + 3 columns for 2 axes: neither form
    refused("waveform", "--in", tmp_path / "g.npy", "--rf-centre", "100us", "--girf", tmp_path / "h3.npy",
            "--json", tmp_path / "bad.json", opt="girf")
    assert not (tmp_path / "bad.json").exists()


def test_girf_bad_input_names_the_option_and_writes_nothing(tmp_path):
    g, adc = readout_waveform()
    np.save(tmp_path / "g.npy", g)
    f = np.linspace(0, 50e3, 11)
    outs = ["--trajectory-actual", tmp_path / "k.npy", "--json", tmp_path / "r.json", "--png", tmp_path / "p.png"]
    base = ["waveform", "--in", tmp_path / "g.npy", "--rf-centre", "50us", "--adc", adc]
    h = np.ones_like(f)
    hn = h.astype(np.complex128)
    hn[4] = np.nan
    girf_file(tmp_path / "nan.npy", f, [h, hn])
    assert "axis 1, frequency 4" in refused(*base, "--girf", tmp_path / "nan.npy", *outs, opt="girf")
    fd = f.copy()
    fd[6] = fd[5]
    girf_file(tmp_path / "dup.npy", fd, [h, h])
    assert "frequency 6" in refused(*base, "--girf", tmp_path / "dup.npy", *outs, opt="girf")
    fn = f.copy()
    fn[3] = np.nan
    girf_file(tmp_path / "fnan.npy", fn, [h, h])
    refused(*base, "--girf", tmp_path / "fnan.npy", *outs, opt="girf")
    girf_file(tmp_path / "one.npy", f, [h])  # one axis for a 2-axis waveform
    refused(*base, "--girf", tmp_path / "one.npy", *outs, opt="girf")
    np.save(tmp_path / "real.npy", np.column_stack([f, h, h]))
    refused(*base, "--girf", tmp_path / "real.npy", *outs, opt="girf")
    t = np.column_stack([f + 0j, h, h]).astype(np.complex64)
    t[2, 0] += 1j
    np.save(tmp_path / "cf.npy", t)
    assert "row 2" in refused(*base, "--girf", tmp_path / "cf.npy", *outs, opt="girf")
    girf_file(tmp_path / "ok.npy", f, [h, h])
    refused(*base, "--girf", tmp_path / "missing.npy", *outs, opt="girf")
    for name in ("k.npy", "k_times.npy", "k.json", "r.json", "p.png"):
        assert not (tmp_path / name).exists(), name
