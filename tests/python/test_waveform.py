"""kweave.waveform() (python/kweave/_waveform.c) against `kweave waveform`:
the same JSON report, the same trajectory and times as --trajectory writes
(bit for bit), the same actual trajectory as --trajectory-actual, and the
command's messages for bad input. The physics of the checks is tested in
the library's and the command's own tests; here the package must give what
the command gives, with a few figures recomputed in numpy as a cross-check."""
import json

import numpy as np
import pytest
from scipy.integrate import cumulative_trapezoid

import kweave
from conftest import same_bits

# gamma/2pi of the proton, CODATA 2018 (42.577 478 518 MHz/T).
GAMMA_BAR = 42.577478518e6


def epi(cli):
    """Shot 0 of a 32x32 EPI train as `kweave pattern --waveform` writes it:
    g.npy (float32 (samples, 2) T/m) and its timing sidecar g.json."""
    cli.run("pattern", "--kind", "epi", "--matrix", "32x32", "--dwell", "10us", "--out", "e.npy",
            "--waveform", "g.npy")
    return cli.load("g.npy"), cli.json("g.json")


def trapezoid():
    """A readout trapezoid on a 10 us raster that breaks both limits:
    45 mT/m (over 40) reached in 2 samples (2250 T/m/s, over 150), flat for
    40 samples, down in 2, then zero; x only, y zero."""
    up = np.array([0.0, 22.5e-3, 45e-3])
    g = np.concatenate([up, np.full(39, 45e-3), up[::-1], np.zeros(5)])
    return np.stack([g, np.zeros_like(g)], axis=1).astype(np.float32)


def test_epi_report_and_trajectory_as_command(cli):
    g, sidecar = epi(cli)
    cli.run("waveform", "--in", "g.npy", "--json", "r.json", "--trajectory", "k.npy")
    want = cli.json("r.json")
    got = kweave.waveform(g, sidecar=sidecar)
    assert {k: got[k] for k in want} == want
    assert set(got) == set(want) | {"trajectory", "times"}
    assert same_bits(got["trajectory"], cli.load("k.npy"))
    assert same_bits(got["times"], cli.load("k_times.npy"))
    assert got["trajectory"].shape == (32 * 32, 2) and got["within_limits"]
    assert got["safety_caution"] == kweave.SAFETY_CAUTION
    # The keywords in place of the sidecar: the same report.
    same = kweave.waveform(g, rf_centre=sidecar["rf_centre_s"], adc=sidecar["adc"])
    assert {k: same[k] for k in want} == want


def test_epi_adc_text_as_command(cli):
    """adc= as the command's --adc text (start as a sample index)."""
    g, sidecar = epi(cli)
    cli.save("h.npy", g)  # no sidecar beside it
    text = ",".join(f"{round(w['start_s'] / 10e-6)}:{w['samples']}:10us" for w in sidecar["adc"])
    cli.run("waveform", "--in", "h.npy", "--rf-centre", "0s", "--adc", text, "--te", "7.59ms",
            "--json", "r.json", "--trajectory", "k.npy")
    got = kweave.waveform(g, rf_centre=0, adc=text, te="7.59ms")
    assert {k: got[k] for k in cli.json("r.json")} == cli.json("r.json")
    assert same_bits(got["trajectory"], cli.load("k.npy"))
    assert got["echo"] is not None


def test_trapezoid_violations_as_command(cli):
    g = trapezoid()
    cli.save("t.npy", g)
    args = ["--rf-centre", "0s", "--adc", "3:40:10us", "--gmax", "40mT/m", "--slew", "150T/m/s",
            "--fov", "200mm,250mm", "--pns-radius", "0.25m", "--limit-vector"]
    cli.run("waveform", "--in", "t.npy", *args, "--json", "r.json", "--trajectory", "k.npy")
    want = cli.json("r.json")
    got = kweave.waveform(g, rf_centre=0, adc="3:40:10us", gmax="40mT/m", slew=150, fov="200mm,250mm",
                          pns_radius=0.25, limit_vector=True)
    assert {k: got[k] for k in want} == want
    assert same_bits(got["trajectory"], cli.load("k.npy"))
    assert not got["within_limits"]
    kinds = {(v["limit"], v["axis"]) for v in got["violations"]}
    assert ("amplitude", "x") in kinds and ("slew", "x") in kinds
    # by hand: 45 mT/m peak, 22.5 mT/m per 10 us step = 2250 T/m/s
    assert got["peak_G_T_per_m"][0] == pytest.approx(45e-3, rel=1e-6)
    assert got["peak_slew_T_per_m_per_s"][0] == pytest.approx(2250, rel=1e-5)
    # k = gamma_bar x integral of G (exact for a piecewise-linear G by the
    # trapezoid rule) x FOV, at samples 3..42, from the RF centre at 0
    t = np.arange(len(g)) * 10e-6
    m0 = cumulative_trapezoid(g[:, 0].astype(np.float64), t, initial=0)
    np.testing.assert_allclose(got["trajectory"][:, 0], GAMMA_BAR * m0[3:43] * 0.2, rtol=1e-5, atol=1e-4)
    np.testing.assert_allclose(got["times"], t[3:43], rtol=1e-6)


def test_delay_actual_trajectory_as_command(cli):
    g, sidecar = epi(cli)
    cli.run("waveform", "--in", "g.npy", "--delay", "3us", "--json", "r.json",
            "--trajectory-actual", "ka.npy")
    want = cli.json("r.json")
    got = kweave.waveform(g, sidecar=sidecar, delay="3us")
    assert {k: got[k] for k in want} == want and want["actual"] is not None
    assert same_bits(got["trajectory_actual"], cli.load("ka.npy"))
    # a pure delay: G(t - d), linear between samples, zero before the start
    # (numpy's interpolation as the reference)
    t = np.arange(len(g)) * 10e-6
    for a in range(2):
        ref = np.interp(t - 3e-6, t, g[:, a].astype(np.float64), left=0.0, right=0.0)
        np.testing.assert_allclose(got["actual_gradient"][:, a], ref, rtol=0, atol=1e-9)
    assert got["actual_gradient"].dtype == np.float64 and got["actual_gradient"].shape == g.shape
    # no imperfection: no actual keys
    assert "trajectory_actual" not in kweave.waveform(g, sidecar=sidecar)


def test_eddy_and_lowpass_as_command(cli):
    g, sidecar = epi(cli)
    for opt, kw in (("--eddy", dict(eddy="0.02:50us")), ("--lowpass", dict(lowpass="20us,30us"))):
        cli.run("waveform", "--in", "g.npy", opt, list(kw.values())[0], "--json", "r.json",
                "--trajectory-actual", "ka.npy")
        got = kweave.waveform(g, sidecar=sidecar, **kw)
        assert {k: got[k] for k in cli.json("r.json")} == cli.json("r.json")
        assert same_bits(got["trajectory_actual"], cli.load("ka.npy"))


def test_girf_as_command(cli):
    """girf=: the command's --girf table as an array. The same report and
    the same actual trajectory bit for bit as the command's (alone, and in
    the cascade with a delay and a low-pass); H = exp(-i 2 pi f 20 us) (a
    10 Hz table to 50 kHz) gives the delay of two rasters: the actual
    gradient is the nominal one moved by 2 samples (numpy's indexing as the
    reference; the table's phase interpolation: 2e-7 relative); the
    command's messages for a bad table."""
    g, sidecar = epi(cli)
    f = np.linspace(0, 50e3, 5001)
    h = np.exp(-2j * np.pi * f * 20e-6)
    table = np.column_stack([f + 0j, h, h]).astype(np.complex64)
    cli.save("h.npy", table)
    for extra, kw in (((), {}), (("--delay", "2us", "--lowpass", "20us"), dict(delay="2us", lowpass="20us"))):
        cli.run("waveform", "--in", "g.npy", "--girf", "h.npy", *extra, "--json", "r.json",
                "--trajectory-actual", "ka.npy")
        want = cli.json("r.json")
        got = kweave.waveform(g, sidecar=sidecar, girf=table, **kw)
        assert {k: got[k] for k in want} == want and want["actual"]["girf"]["frequencies"] == 5001
        assert same_bits(got["trajectory_actual"], cli.load("ka.npy"))
    got = kweave.waveform(g, sidecar=sidecar, girf=table)
    ref = np.concatenate([np.zeros((2, 2)), g[:-2].astype(np.float64)])
    np.testing.assert_allclose(got["actual_gradient"], ref, rtol=0, atol=1e-6 * np.abs(g).max())
    # the cross-axis form (H_xx, H_xy, H_yx, H_yy)
    cross = np.column_stack([f + 0j, h, 0.1 * h, 0 * h, h]).astype(np.complex64)
    cli.save("hc.npy", cross)
    cli.run("waveform", "--in", "g.npy", "--girf", "hc.npy", "--json", "r.json", "--trajectory-actual", "ka.npy")
    got = kweave.waveform(g, sidecar=sidecar, girf=cross)
    assert {k: got[k] for k in cli.json("r.json")} == cli.json("r.json")
    assert same_bits(got["trajectory_actual"], cli.load("ka.npy"))
    bad = table.copy()
    bad[3, 0] = np.nan
    for arr in (bad, table[:, :2], table.real.astype(np.float32)):
        cli.save("hb.npy", arr)
        want = cli.error("waveform", "--in", "g.npy", "--girf", "hb.npy")
        with pytest.raises(kweave.InputError) as e:
            kweave.waveform(g, sidecar=sidecar, girf=arr)
        assert str(e.value) == want and e.value.param == "girf"


def test_rf_centres_as_command(cli):
    """rf_centres=: the command's --rf-centres, as a str (the same report
    and trajectory bit for bit) and as a list of numbers (s; the same
    trajectory within float32 rounding); k restarts at
    each centre (the trapezoid's area before the second centre is not
    carried: scipy's cumulative trapezoid from that centre as the
    reference); the command's message for centres that do not increase."""
    g = trapezoid()
    cli.save("t.npy", g)
    args = ["--rf-centres", "0s,200us", "--adc", "25:10:10us", "--te", "300us"]
    cli.run("waveform", "--in", "t.npy", *args, "--json", "r.json", "--trajectory", "k.npy")
    want = cli.json("r.json")
    got = kweave.waveform(g, rf_centres="0s,200us", adc="25:10:10us", te="300us")
    assert {k: got[k] for k in want} == want and want["rf_centres_s"] == [0, 200e-6]
    assert same_bits(got["trajectory"], cli.load("k.npy"))
    # numbers in s: 200e-6 is not bit for bit the command's 200 x 1e-6
    got = kweave.waveform(g, rf_centres=[0.0, 200e-6], adc="25:10:10us", te="300us")
    np.testing.assert_allclose(got["trajectory"], cli.load("k.npy"), rtol=0, atol=1e-5)
    assert got["rf_centres_s"] == [0, 200e-6]
    t = np.arange(len(g)) * 10e-6
    m0 = cumulative_trapezoid(g[:, 0].astype(np.float64), t, initial=0)
    ref = GAMMA_BAR * 0.256 * (m0[25:35] - m0[20])
    np.testing.assert_allclose(got["trajectory"][:, 0], ref, rtol=0, atol=1e-4)
    msg = command_error(cli, g, "--rf-centres", "200us,0s")
    with pytest.raises(kweave.InputError) as e:
        kweave.waveform(g, rf_centres="200us,0s")
    assert str(e.value) == msg and e.value.param == "rf-centres"


def test_no_adc_gives_no_trajectory():
    got = kweave.waveform(trapezoid(), rf_centre="0.1ms")
    assert got["trajectory"] is None and got["times"] is None and got["adc"] == []


def radial(spokes=32, n=64, fov=0.2):
    """Spokes at 2 pi s / S (spoke s opposed to s + S/2), each a prephaser
    to -n/2 cycles/FOV and a readout whose dwell is the raster with one
    cycle/FOV per sample (G = 1 / (gamma_bar FOV raster)), sample n/2 at
    k = 0, and a rewinder back to k = 0; one ADC window per spoke on the
    flat top. RF centre at sample 2."""
    h, r = 10e-6, 8
    gr = 1 / (GAMMA_BAR * fov * h)
    # prephaser and rewinder: area (r + flat) rasters x gr = n/2 + r/2
    # cycles/FOV (the readout's ramp before the first sample adds r/2)
    flat = n // 2 - r // 2
    seg = 2 * (2 * r + flat + 1) + (2 * r + n + 1) + 4
    g = np.zeros((4 + spokes * seg, 2))
    adc = []

    def trap(s, f, a):
        k = np.arange(2 * r + f + 1)
        return s, np.where(k <= r, a * k / r, np.where(k <= r + f, a, a * (2 * r + f - k) / r))

    for sp in range(spokes):
        th = 2 * np.pi * sp / spokes
        s0 = 4 + sp * seg
        s1 = s0 + 2 * r + flat + 1
        s2 = s1 + 2 * r + n + 1
        for s, b in (trap(s0, flat, -gr), trap(s1, n, gr), trap(s2, flat, -gr)):
            g[s:s + len(b), 0] += b * np.cos(th)
            g[s:s + len(b), 1] += b * np.sin(th)
        adc.append({"start_sample": s1 + r, "samples": n, "dwell_s": h})
    return g.astype(np.float32), {"raster_s": h, "rf_centre_s": 2 * h, "adc": adc}


def test_delay_estimate_as_command(cli):
    """A 2 us delay put in by the package (trajectory_actual), the data
    simulated on it (acquire), the delay estimated back from them
    (Peters, Derbyshire & McVeigh, MRM 50:1-6, 2003): the command's figure,
    and within 0.2 us of 2 us (the bound of tests/ref/test_waveform.py,
    noise-free)."""
    g, sidecar = radial()
    r = kweave.waveform(g, sidecar=sidecar, delay="2us", fov="200mm")
    # the nominal spokes are those of the helper's design: sample j of
    # spoke s at (j - n/2)(cos, sin)(2 pi s / S) cycles/FOV
    th = 2 * np.pi * np.arange(32)[:, None] / 32
    j = np.arange(64)[None, :] - 32
    want_k = np.stack([j * np.cos(th), j * np.sin(th)], axis=-1).reshape(-1, 2)
    assert np.abs(r["trajectory"] - want_k).max() < 1e-4
    ka = r["trajectory_actual"]
    ks = kweave.acquire(phantom="shepp-logan", matrix=64, fov="200mm", trajectory=ka).kspace
    cli.save("rad.npy", g)
    with open(cli.path("rad.json"), "w") as f:
        json.dump(sidecar, f)
    cli.save("ks.npy", ks)
    cli.run("waveform", "--in", "rad.npy", "--estimate-delay", "ks.npy", "--json", "r.json")
    want = cli.json("r.json")
    got = kweave.waveform(g, sidecar=sidecar, estimate_delay=ks)
    assert {k: got[k] for k in want} == want
    est = got["delay_estimate"]["delay_s"]
    print(f"delay 2 us estimated as {est * 1e6:.4f} us")
    assert abs(est - 2e-6) < 0.2e-6, est
    # the command's messages: an odd number of windows, data of another size, real data
    odd = dict(sidecar, adc=sidecar["adc"][:-1])
    with open(cli.path("rad.json"), "w") as f:
        json.dump(odd, f)
    want = cli.error("waveform", "--in", "rad.npy", "--estimate-delay", "ks.npy")
    with pytest.raises(kweave.InputError) as e:
        kweave.waveform(g, sidecar=odd, estimate_delay=ks)
    assert str(e.value) == want
    with open(cli.path("rad.json"), "w") as f:
        json.dump(sidecar, f)
    for bad in (ks[..., :-1], ks.real.astype(np.float32)):
        cli.save("bad.npy", bad)
        want = cli.error("waveform", "--in", "rad.npy", "--estimate-delay", "bad.npy")
        with pytest.raises(kweave.InputError) as e:
            kweave.waveform(g, sidecar=sidecar, estimate_delay=bad)
        assert str(e.value) == want


def command_error(cli, g, *args):
    """The command's message for the waveform file `g` (the command's --in
    is the package's g)."""
    cli.save("b.npy", g)
    msg = cli.error("waveform", "--in", "b.npy", *args)
    return "g: " + msg[len("in: "):] if msg.startswith("in: ") else msg


def test_errors_as_command(cli):
    g = trapezoid()
    nan = g.copy()
    nan[7, 1] = np.nan
    cases = [
        (nan, ["--rf-centre", "0s"], dict(rf_centre=0)),
        (np.zeros((10, 4), np.float32), ["--rf-centre", "0s"], dict(rf_centre=0)),
        (np.zeros((2, 3, 4), np.float32), ["--rf-centre", "0s"], dict(rf_centre=0)),
        (g, [], {}),
        (g, ["--rf-centre", "1s"], dict(rf_centre="1s")),
        (g, ["--rf-centre", "0s", "--adc", "3:41:7us"], dict(rf_centre=0, adc="3:41:7us")),
        (g, ["--rf-centre", "0s", "--adc", "3:40"], dict(rf_centre=0, adc="3:40")),
        (g, ["--rf-centre", "0s", "--fov", "200"], dict(rf_centre=0, fov="200")),
        (g, ["--rf-centre", "0s", "--eddy", "2:50us"], dict(rf_centre=0, eddy="2:50us")),
        (g, ["--rf-centre", "0s", "--delay", "3xs"], dict(rf_centre=0, delay="3xs")),
        (g, ["--rf-centre", "0s", "--held", "--delay", "1s"], dict(rf_centre=0, held=True, delay="1s")),
    ]
    for arr, args, kw in cases:
        want = command_error(cli, arr, *args)
        with pytest.raises(kweave.InputError) as e:
            kweave.waveform(arr, **kw)
        assert str(e.value) == want, (args, kw)
    with pytest.raises(kweave.InputError) as e:
        kweave.waveform(nan, rf_centre=0)
    assert e.value.param == "g" and str(e.value) == "g: sample 7, axis y: not a finite number"


def test_sidecar_errors_as_command(cli):
    g = trapezoid()
    cli.save("s.npy", g)
    with open(cli.path("s.json"), "w") as f:
        json.dump({"rf_centre_s": "soon"}, f)
    want = cli.error("waveform", "--in", "s.npy")
    with pytest.raises(kweave.InputError) as e:
        kweave.waveform(g, sidecar={"rf_centre_s": "soon"})
    assert str(e.value) == want


def test_unknown_keyword_is_a_type_error():
    with pytest.raises(TypeError) as e:
        kweave.waveform(trapezoid(), rf_center=0)
    assert "rf_centre" in str(e.value)
    with pytest.raises(TypeError):
        kweave.waveform()
