"""Help texts and misspelt options of every verb (issue 17): each option's
argument has a placeholder by type (LENGTH, TIME, N, X, FILE, DIR, ...) or,
for other text, named after the option (no one-letter placeholders), the help
column is aligned (a long option gets its help on the next line), a misspelt
option is answered with the closest one, and the -ize spelling of an option
spelt -ise is accepted."""
import re

import pytest

from conftest import run

VERBS = ["plan", "pattern", "encode", "recon", "score", "preview", "waveform", "render", "sweep", "demo"]
# placeholders by type (cli/cli.c): quantities by kind, N integer, X number,
# FILE / DIR, SIZE (--max-memory), and a few texts named for what they hold
TYPED = {"LENGTH", "FIELD", "GRADIENT", "SLEW", "FREQ", "TIME", "TEMP", "ANGLE", "PPM", "N", "X",
         "FILE", "DIR", "SIZE", "BANDWIDTH", "LABEL", "TEXT", "WORD", "LIST"}


@pytest.mark.parametrize("verb,opt,arg", [
    ("plan", "--fov", "LENGTH"), ("plan", "--te", "TIME"), ("plan", "--b0", "FIELD"),
    ("plan", "--gmax", "GRADIENT"), ("plan", "--slew", "SLEW"), ("plan", "--shots", "N"),
    ("plan", "--tbw", "X"), ("plan", "--protocol", "FILE"), ("plan", "--json", "FILE"),
    ("pattern", "--dwell", "TIME"), ("pattern", "--seed", "N"), ("pattern", "--out", "FILE"),
    ("encode", "--flip", "ANGLE"), ("encode", "--df", "FREQ"), ("encode", "--snr", "X"),
    ("recon", "--in", "FILE"), ("recon", "--fov", "LENGTH"), ("recon", "--iterations", "N"),
    ("recon", "--lambda", "X"), ("score", "--ref", "FILE"), ("render", "--title", "TEXT"),
    ("sweep", "--out", "DIR"), ("demo", "--out", "DIR"),
])
def test_placeholders_say_the_type(verb, opt, arg):
    """Issue 17: "a placeholder by type (N, X, LENGTH, FILE ...)"."""
    assert (_options(verb)[opt][0] or "").strip() == arg


@pytest.mark.parametrize("verb", VERBS)
def test_help_columns_align_and_name_their_arguments(verb):
    p = run(verb, "--help")
    lines = p.stdout.splitlines()
    opts = lines[lines.index("Options:") + 1:]
    assert opts, p.stdout
    i = 0
    while i < len(opts):
        line = opts[i]
        m = re.match(r"  (--[a-z0-9-]+)( [A-Z0-9_]+)?(?:( {2,})(\S.*))?$", line)
        assert m, f"{verb}: {line!r}"
        if m.group(2):   # a placeholder by type, else the option's name in capitals
            assert m.group(2).strip() in TYPED or \
                m.group(2).strip() == m.group(1)[2:].upper().replace("-", "_"), line
        if m.group(4) is None:
            i += 1       # the help on the next line, in the column
            assert re.match(r" {27}\S", opts[i]), f"{verb}: {opts[i]!r}"
        else:
            assert line.index(m.group(4)) == 27, f"{verb}: {line!r}"
        i += 1


@pytest.mark.parametrize("verb,typo,meant", [
    ("plan", "--bandwith", "--bandwidth"),
    ("recon", "--lamda", "--lambda"),
    ("encode", "--phantm", "--phantom"),
    ("pattern", "--kidn", "--kind"),
])
def test_a_misspelt_option_names_the_closest(verb, typo, meant):
    p = run(verb, typo, "1", check=False)
    assert p.returncode == 2
    assert p.stderr.strip() == f"kweave: error: {typo}: unknown option; did you mean {meant}? (see --help)"


def test_an_unrelated_option_has_no_suggestion():
    p = run("recon", "--zzzzzzzz", "1", check=False)
    assert p.returncode == 2
    assert "did you mean" not in p.stderr


def test_analyze_is_analyse(tmp_path):
    run("pattern", "--kind", "uniform", "--matrix", "32x32", "--accel", "2", "--out", tmp_path / "m.npy")
    a = run("pattern", "--analyse", tmp_path / "m.npy", "--json", tmp_path / "a.json")
    b = run("pattern", "--analyze", tmp_path / "m.npy", "--json", tmp_path / "b.json")
    assert a.stdout == b.stdout
    assert (tmp_path / "a.json").read_text() == (tmp_path / "b.json").read_text()


def test_unknown_kind_lists_the_kinds():
    p = run("pattern", "--kind", "nope", "--matrix", "64", check=False)
    assert p.returncode == 2
    assert p.stderr.strip() == ("kweave: error: kind: unknown kind 'nope' (one of: full, partial, "
                                "uniform, random, poisson, lattice, radial, golden, stack-of-stars, "
                                "spiral, epi)")


# Every enumerated value: a near miss gets the closest value, and the list.
ENUMS = [
    (["pattern", "--kind", "poison", "--matrix", "64"], "kind", "poisson", "spiral, epi"),
    (["pattern", "--kind", "unifrom", "--matrix", "64"], "kind", "uniform", "spiral, epi"),
    (["encode", "--phantom", "wave", "--fov", "200mm", "--matrix", "32"], "phantom", "weave",
     "weave, weave3d"),
    (["encode", "--phantom", "weave", "--fov", "200mm", "--matrix", "32", "--sequence", "gr"],
     "sequence", "gre", "pd, gre, se, ir"),
    (["plan", "--sequence", "epo", "--fov", "200mm", "--matrix", "64"], "sequence", "epi",
     "gre, se, epi, radial, spiral"),
    (["recon", "--method", "sens"], "method", "sense", "cs-wavelet-admm, cs-tv-admm"),
    (["recon", "--method", "grapa"], "method", "grappa", "fft, homodyne, pocs"),
    (["recon", "--combine", "rms"], "combine", "rss", "rss, optimal, adaptive"),
    (["render", "--part", "magn"], "part", "mag", "mag, phase, real, imag, logmag"),
]


@pytest.mark.parametrize("args,field,near,listed", ENUMS)
def test_an_unknown_value_names_the_closest_and_the_list(tmp_path, args, field, near, listed):
    import numpy as np
    np.save(tmp_path / "ks.npy", np.ones((2, 8, 8), np.complex64))
    verb = args[0]
    extra = {"recon": ["--in", tmp_path / "ks.npy", "--out", tmp_path / "o.npy"],
             "render": ["--in", tmp_path / "ks.npy", "--out", tmp_path / "o.png"],
             "encode": ["--out", tmp_path / "o.npy"],
             "pattern": ["--out", tmp_path / "o.npy"], "plan": []}[verb]
    p = run(*args, *extra, check=False)
    assert p.returncode == 2
    line = p.stderr.strip()
    assert line.count("\n") == 0, line
    assert line.startswith(f"kweave: error: {field}: unknown "), line
    assert f"; did you mean '{near}'? (one of: " in line and listed in line, line
    assert not any((tmp_path / n).exists() for n in ("o.npy", "o.png"))


def test_an_unknown_value_far_from_all_has_no_suggestion(tmp_path):
    p = run("render", "--in", tmp_path / "x.npy", "--out", tmp_path / "o.png", "--part", "zzzzzz",
            check=False)
    assert p.returncode == 2 and "did you mean" not in p.stderr and "(one of: mag," in p.stderr


def test_a_field_without_tabulated_times_names_the_tissue_option(tmp_path):
    p = run("encode", "--phantom", "weave", "--matrix", "32", "--fov", "256mm", "--b0", "7T",
            "--out", tmp_path / "k.npy", check=False)
    assert p.returncode == 2
    assert "--tissue FILE.json" in p.stderr and "--tissue list" in p.stderr
    assert not (tmp_path / "k.npy").exists()


def test_the_failing_line_is_a_sentence():
    import os
    proto = os.path.join(os.path.dirname(__file__), "..", "..", "samples", "weave-too-thin.protocol")
    p = run("plan", "--protocol", proto, check=False)
    assert p.returncode == 3
    line = next(l for l in p.stdout.splitlines() if l.startswith("Feasible: NO. Failing:"))
    assert line.endswith(").") and not line.endswith(";") and "); te (" in line


def _options(verb):
    """{option: (placeholder or None, help text)} of a verb's --help, the
    help of a long option joined from the line below it."""
    lines = run(verb, "--help").stdout.splitlines()
    opts, out, i = lines[lines.index("Options:") + 1:], {}, 0
    while i < len(opts):
        m = re.match(r"  (--[a-z0-9-]+)( [A-Z0-9_]+)?(?: {2,}(\S.*))?$", opts[i])
        text = m.group(3)
        if text is None:
            i += 1
            text = opts[i].strip()
        out[m.group(1)] = (m.group(2), text)
        i += 1
    return out


# Every verb's help now states required / none for its file options too.
NOT_YET_STATED = {}


@pytest.mark.parametrize("verb", VERBS)
def test_every_option_with_a_value_states_its_default(verb):
    """Issue 17: an option that takes a value has a placeholder and says its
    default, or says that it is required, or that there is none."""
    for opt, (arg, text) in _options(verb).items():
        if arg is None or opt in NOT_YET_STATED.get(verb, ()):
            continue     # a flag: off unless given
        assert re.search(r"\bdefault\b|\brequired\b|\bnone\b", text), f"{verb} {opt}: {text!r}"


def _default(verb, opt):
    text = _options(verb)[opt][1]
    m = re.search(r"default:? ([^ ;,)]+)", text)
    assert m, f"{verb} {opt}: {text!r}"
    return m.group(1)


@pytest.mark.parametrize("opt", ["--fov", "--gmax", "--slew", "--raster", "--shots"])
def test_plan_and_pattern_share_their_defaults(opt):
    """One default per quantity (libencode/defaults.h), the same in both verbs."""
    assert _default("plan", opt) == _default("pattern", opt)


def test_the_spiral_readout_limit_is_the_same_in_plan_and_pattern():
    plan = _default("plan", "--max-readout")
    pat = re.search(r"readouts <= (\S+?)\)", _options("pattern")["--interleaves"][1]).group(1)
    assert plan == pat == "10ms"


def test_plan_and_encode_share_the_field():
    assert _default("plan", "--b0") == _default("encode", "--b0") == "3T"


def test_the_pattern_radial_dwell_is_the_plans_bandwidth_per_pixel():
    bw = re.search(r"default (\S+)$", _options("plan")["--bandwidth"][1]).group(1)
    assert f"1/({bw} x N)" in _options("pattern")["--dwell"][1]


def test_plan_and_encode_sequences_say_which_quantity_each_is():
    """Not one quantity: plan times a pulse sequence (gre), encode chooses
    the signal model (pd); each help names the other's default."""
    plan, enc = _options("plan")["--sequence"][1], _options("encode")["--sequence"][1]
    assert "default gre" in plan and "pd" in plan
    assert "default: proton density" in enc and "default gre" in enc


def test_the_spiral_defaults_match_in_the_planner_and_the_pattern(tmp_path):
    """The same spiral (256 mm, 40 mT/m, 150 T/m/s, 4 us dwell = 250 kHz):
    plan and pattern choose the same number of interleaves by default."""
    import json
    run("plan", "--sequence", "spiral", "--matrix", "128", "--bandwidth", "250kHz",
        "--json", tmp_path / "p.json", check=False)
    run("pattern", "--kind", "spiral", "--matrix", "128", "--out", tmp_path / "s.npy")
    plan = json.loads((tmp_path / "p.json").read_text())
    pat = json.loads((tmp_path / "s.json").read_text())
    assert plan["interleaves"] == pat["interleaves"] == 6, (plan, pat)
    assert plan["readout_per_interleave_s"] == pat["readout_s"] <= 10e-3
