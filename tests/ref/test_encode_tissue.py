"""`kweave encode --tissue`: the caller's tissue values instead of the table's
(issue 5's `--tissue` interface), at any field strength. References: the
Ernst steady state and the inversion-recovery null, computed here by hand
(numpy) from the values the test gives."""
import json

import numpy as np
import pytest

from conftest import bad, run
from conftest import centered_ifft2 as recon
from conftest import encode as enc

N = 128


def vial(img, ang, n=N):
    x, y = 0.55 * np.cos(np.deg2rad(ang)), 0.55 * np.sin(np.deg2rad(ang))
    c, r = n // 2 + int(round(x * n / 2)), n // 2 - int(round(y * n / 2))
    return img[r - 3:r + 4, c - 3:c + 4].mean()


def test_given_values_set_the_gre_contrast(tmp_path):
    """White matter (vial at 90 deg) given PD 0.60, T1 500 ms, T2 60 ms, T2*
    40 ms at 7 T, every other tissue of weave given as well (so the table,
    which stops at 3 T, is not needed): spoiled GRE TR 30 ms, 25 deg, TE 4 ms
    gives pd sin a (1 - E1)/(1 - cos a E1) exp(-TE/T2*) (Ernst; by hand)."""
    given = {name: {"pd": 0.7, "t1_s": 1.0, "t2_s": 0.05, "t2star_s": 0.03}
             for name in ("grey-matter", "csf", "muscle", "liver", "blood", "fat")}
    given["white-matter"] = {"pd": 0.60, "t1_s": 0.500, "t2_s": 0.060, "t2star_s": 0.040}
    (tmp_path / "t.json").write_text(json.dumps(given))
    k, j = enc(tmp_path, "g", "--phantom", "weave", "--matrix", str(N), "--fov", "240mm",
               "--b0", "7T", "--tissue", tmp_path / "t.json", "--sequence", "gre", "--te", "4ms",
               "--tr", "30ms", "--flip", "25", "--quiet")
    wm = j["tissues"]["white-matter"]
    assert wm == {"species": "water", "pd": 0.6, "t1_s": 0.5, "t2_s": 0.06, "t2star_s": 0.04,
                  "source": "--tissue"}
    assert j["tissue_file"] == "t.json"
    a, tr, te = np.deg2rad(25), 0.030, 0.004
    e1 = np.exp(-tr / 0.5)
    want = 0.60 * np.sin(a) * (1 - e1) / (1 - np.cos(a) * e1) * np.exp(-te / 0.040)
    got = vial(np.abs(recon(k.astype(complex))), 90)
    assert got == pytest.approx(want, rel=0.02), (got, want)


def test_given_t1_moves_the_inversion_null(tmp_path):
    """Grey matter given T1 = 900 ms at 3 T (the other tissues from the table):
    inversion recovery with TR >> T1 nulls it at TI = T1 ln 2 = 623.8 ms."""
    (tmp_path / "t.json").write_text(json.dumps(
        {"grey-matter": {"t1_s": 0.9, "t2_s": 0.1, "t2star_s": 0.05}}))
    ti = 0.9 * np.log(2)
    k, j = enc(tmp_path, "i", "--phantom", "weave", "--matrix", str(N), "--fov", "240mm",
               "--tissue", tmp_path / "t.json", "--sequence", "ir", "--te", "10ms", "--tr", "20s",
               "--ti", f"{ti * 1e3:.4f}ms", "--quiet")
    assert j["tissues"]["white-matter"]["source"] == "kweave table"
    assert j["tissues"]["grey-matter"]["pd"] == pytest.approx(0.80)  # the table's PD kept
    img = recon(k.astype(complex)).real
    muscle = img[N // 2 + int(0.35 * N / 2), N // 2]
    gm = vial(img, 30)
    assert abs(gm) < 0.01 * abs(muscle) + 2e-3, (gm, muscle)


def test_tissue_list_prints_the_table():
    p = run("encode", "--tissue", "list")
    for name in ("white-matter", "grey-matter", "csf", "muscle", "liver", "blood", "fat"):
        assert name in p.stdout
    assert "1084" in p.stdout and "Stanisz" in p.stdout and "recalled" in p.stdout


@pytest.mark.parametrize("content,why", [
    ('{"white-matter": {"pd": 0.7', "tissue"),
    ('[1, 2]', "object"),
    ('{"bone": {"pd": 0.2}}', "unknown tissue"),
    ('{"csf": {"T1": 4}}', "unknown key"),
    ('{"csf": {"t1_s": -4, "t2_s": 2, "t2star_s": 0.2}}', "t1_s"),
    ('{"csf": {"t1_s": 4}}', "together"),
    ('{"csf": {"t1_s": 4, "t2_s": 0.1, "t2star_s": 0.2}}', "above T2"),
])
def test_bad_tissue_file(tmp_path, content, why):
    (tmp_path / "t.json").write_text(content)
    out = tmp_path / "k.npy"
    line = bad("encode", "--phantom", "weave", "--matrix", "32", "--fov", "200mm", "--tissue",
               tmp_path / "t.json", "--out", out, field="tissue" if why != "above T2" else "tissue")
    assert why in line, line
    assert not out.exists()


def test_table_needed_outside_1p5_and_3t(tmp_path):
    (tmp_path / "t.json").write_text('{"csf": {"t1_s": 4, "t2_s": 2, "t2star_s": 0.2}}')
    line = bad("encode", "--phantom", "weave", "--matrix", "32", "--fov", "200mm", "--b0", "7T",
               "--tissue", tmp_path / "t.json", "--out", tmp_path / "k.npy", field="b0")
    assert "give its T1, T2 and T2*" in line
    bad("encode", "--phantom", "shepp-logan", "--matrix", "32", "--fov", "200mm", "--tissue",
        tmp_path / "t.json", "--out", tmp_path / "k.npy", field="tissue")
