"""One table of report names (issue 17): libencode/report_names.h gives each
quantity of the plan report and of the pattern analysis its JSON key and its
text label; the JSON builders and the text printers take them from there.
Checked on real runs: whenever a key of the table has a value in the JSON of
a run, one of its labels is in the text of the same run; and the table's
keys and labels are those the outputs use (no entry left unused)."""
import json
import os
import re

import pytest

from conftest import run

TOP = os.path.join(os.path.dirname(__file__), "..", "..")
SAMPLES = os.path.join(TOP, "samples")


def _table(macro):
    """{json key: [labels]} of one list of report_names.h."""
    text = open(os.path.join(TOP, "libencode", "report_names.h")).read()
    body = text[text.index(f"#define {macro}(X)"):]
    body = body[:body.index("\n\n")]
    out = {}
    for _id, key, label, _unit in re.findall(r'X\((\w+), "([^"]*)", "([^"]*)", "([^"]*)"\)', body):
        out.setdefault(key, []).append(label)
    assert out, macro
    return out


PLAN = _table("KW_PLAN_REPORT_NAMES")
ANALYSIS = _table("KW_ANALYSIS_REPORT_NAMES")
LOBES = {"slice_select", "slice_rephaser", "readout", "prephaser", "phase_encode",
         "partition_encode", "spoiler", "crusher"}


def _check(table, js, text, skip=()):
    seen = set()
    for key, labels in table.items():
        if key in skip:
            continue
        if js.get(key) is None:
            continue
        assert any(l in text for l in labels), f"{key}: none of {labels} in\n{text}"
        seen.add(key)
    return seen


def _plan(tmp_path, name, *extra):
    out = tmp_path / f"{name}.json"
    p = run("plan", "--protocol", os.path.join(SAMPLES, f"weave-{name}.protocol"), *extra,
            "--json", out, check=False)
    assert p.returncode in (0, 3), p.stderr
    return json.loads(out.read_text()), p.stdout


def test_every_plan_name_is_in_the_text_when_in_the_json(tmp_path):
    seen = set()
    for name in ["gre", "se", "epi", "radial", "spiral", "3d-gre", "too-thin"]:
        js, text = _plan(tmp_path, name, "--t2star", "40ms",
                         "--reference", os.path.join(SAMPLES, "weave-gre.protocol"))
        # a spiral's readout gradient is not one value, and a 3-D slab is the
        # z FOV: the text leaves them out
        skip = {"spiral": ("readout_gradient_T_per_m",), "3d-gre": ("slice_m",)}.get(name, ())
        seen |= _check({k: v for k, v in PLAN.items() if k not in LOBES}, js, text, skip)
        lobes = js["lobes"]
        for key in LOBES & lobes.keys():
            assert any(f"    {l} " in text for l in PLAN[key]), (name, key, text)
            seen.add(key)
    # every entry of the table was met in some run
    assert seen == set(PLAN), set(PLAN) - seen


def _pattern(tmp_path, *args):
    out = tmp_path / "a.json"
    p = run("pattern", *args, "--json", out)
    return json.loads(out.read_text()), p.stdout


@pytest.mark.parametrize("args", [
    ["--kind", "poisson", "--matrix", "64x64", "--accel", "3", "--acs", "12"],
    ["--kind", "uniform", "--matrix", "48x48", "--accel", "2"],
    ["--kind", "poisson", "--matrix", "32x32x16", "--accel", "2x2", "--acs", "8"],
    ["--kind", "radial", "--matrix", "64"],
    ["--kind", "spiral", "--matrix", "64"],
])
def test_every_analysis_name_is_in_the_text_when_in_the_json(tmp_path, args):
    js, text = _pattern(tmp_path, *args, "--out", tmp_path / "p.npy")
    # a 2-D mask's text gives the ACS lines, a 3-D one's the block (with the
    # lines in brackets); the JSON has both
    skip = ("acs_block",) if "ACS lines" in text else ("acs_lines",)
    seen = _check(ANALYSIS, js, text, skip)
    assert {"max_gap_dk", "psf_fwhm_pixels", "psf_peak_sidelobe",
            "psf_energy_outside_mainlobe"} <= seen
    # the analysis of the file says the same
    js2, text2 = _pattern(tmp_path, "--analyse", tmp_path / "p.npy")
    _check(ANALYSIS, js2, text2, skip)


def test_the_tpsf_figure_has_one_name():
    """The case of issue 17: text "TPSF incoherence", JSON tpsf_incoherence."""
    assert ANALYSIS["tpsf_incoherence"] == ["TPSF incoherence"]
