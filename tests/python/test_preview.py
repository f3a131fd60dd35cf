"""kweave.preview() (python/kweave/_preview.c) against `kweave preview`:
the same report (every effect's predicted and measured value, verdicts) and
the same messages for bad input; the image is the scenario's, (ny, nx)
float32. The physics of the measurements is checked in
tests/ref/test_preview.py against the published formulas; here the package
must give what the command gives."""
import os

import numpy as np
import pytest

import kweave
from conftest import ROOT

SAMPLES = os.path.join(ROOT, "samples")


def effects(report):
    """The effects but their measured values (those: same_effects())."""
    return [(e["name"], e["axis"], e["predicted"], e["verdict"]) for e in report["effects"]]


def same_effects(got, want):
    """Same effects, predictions and verdicts; measured values within 1e-5
    relative: the package and the command may plan their single-precision
    FFTs differently (wisdom made in another order), which moves rounding
    (seen: 2e-7 relative), not the measurement."""
    assert effects(got) == effects(want)
    for g, w in zip(got["effects"], want["effects"]):
        assert g["measured"] == pytest.approx(w["measured"], rel=1e-5, abs=1e-9), g["name"]
    return True


@pytest.mark.parametrize("sample", ["weave-gre.protocol", "weave-epi.protocol"])
def test_preview_same_as_command(cli, sample):
    path = os.path.join(SAMPLES, sample)
    cli.run("preview", "--protocol", path, "--json", "r.json")
    want = cli.json("r.json")
    cli.sync()
    got = kweave.preview(path)
    assert same_effects(got, want)
    assert got["all_pass"] == want["all_pass"] and got["safety_caution"] == kweave.SAFETY_CAUTION
    img = got["image"]
    assert img.dtype == np.float32 and img.shape == (want["protocol"]["matrix"][1],
                                                    want["protocol"]["matrix"][0])
    assert np.isfinite(img).all() and img.max() > 0


def test_preview_keywords_override_the_file(cli):
    path = os.path.join(SAMPLES, "weave-gre.protocol")
    cli.run("preview", "--protocol", path, "--bandwidth", "200Hz/pixel", "--bump", "50Hz",
            "--json", "r.json")
    want = cli.json("r.json")
    cli.sync()
    got = kweave.preview(path, bandwidth="200Hz/pixel", bump="50Hz")
    assert same_effects(got, want)


def test_preview_reference_side_by_side(cli):
    p = os.path.join(SAMPLES, "weave-gre.protocol")
    q = os.path.join(SAMPLES, "weave-se.protocol")
    cli.run("preview", "--protocol", p, "--reference", q, "--replicas", "8", "--json", "r.json")
    want = cli.json("r.json")
    cli.sync()
    got = kweave.preview(p, reference=q, replicas=8)
    assert same_effects(got, want)
    assert same_effects(got["reference_preview"], want["reference_preview"])
    assert "snr_ratio" in [e["name"] for e in got["effects"]]


@pytest.mark.parametrize("args,kw", [
    (["--sequence", "radial", "--fov", "200mm", "--matrix", "64"],
     dict(sequence="radial", fov="200mm", matrix=64)),
    (["--protocol", os.path.join(SAMPLES, "weave-gre.protocol"), "--replicas", "1"],
     dict(protocol=os.path.join(SAMPLES, "weave-gre.protocol"), replicas=1)),
    (["--protocol", os.path.join(SAMPLES, "weave-gre.protocol"), "--seed", "-1"],
     dict(protocol=os.path.join(SAMPLES, "weave-gre.protocol"), seed=-1)),
])
def test_preview_errors_as_command(cli, args, kw):
    want = cli.error("preview", *args)
    with pytest.raises(kweave.InputError) as e:
        kweave.preview(**kw)
    assert str(e.value) == want


def test_preview_unknown_keyword_is_a_type_error():
    with pytest.raises(TypeError) as e:
        kweave.preview(bandwith="200Hz/pixel")
    assert "bandwidth" in str(e.value)
