"""Pipes (issue 16): `kweave encode --out -` writes the array to standard
output and its sidecar to the file --sidecar names; `kweave recon --in -
--sidecar FILE` reads them; the results equal the ones made through files,
byte for byte, and the README's pipe example runs as written."""
import os
import re
import subprocess

import numpy as np

from conftest import KWEAVE, run

ROOT = os.path.join(os.path.dirname(__file__), "..", "..")
SCENE = ["--phantom", "weave", "--matrix", "48", "--fov", "256mm", "--coils", "4", "--snr", "40",
         "--seed", "3"]


def test_encode_to_stdout_equals_the_file(tmp_path):
    run("encode", *SCENE, "--out", tmp_path / "f.npy")
    p = subprocess.run([KWEAVE, "encode", *SCENE, "--out", "-", "--sidecar", "p.json"],
                       cwd=tmp_path, capture_output=True, timeout=300)
    assert p.returncode == 0, p.stderr
    assert p.stdout == (tmp_path / "f.npy").read_bytes()
    assert b"coil sensitivities" in p.stderr          # the summary goes to stderr
    # the noise covariance lies beside the sidecar, and the sidecar names it so
    assert (tmp_path / "p_noise_cov.npy").read_bytes() == (tmp_path / "f_noise_cov.npy").read_bytes()
    side = (tmp_path / "p.json").read_text()
    assert '"p_noise_cov.npy"' in side
    assert side.replace("p_noise_cov", "f_noise_cov") == (tmp_path / "f.json").read_text()


def test_encode_to_recon_pipe_equals_the_files(tmp_path):
    run("encode", *SCENE, "--out", tmp_path / "f.npy")
    run("recon", "--in", tmp_path / "f.npy", "--method", "sense", "--out", tmp_path / "f_img.npy")
    cmd = (f"'{KWEAVE}' encode {' '.join(SCENE)} --out - --sidecar ks.json | "
           f"'{KWEAVE}' recon --in - --sidecar ks.json --method sense --out p_img.npy")
    p = subprocess.run(cmd, shell=True, cwd=tmp_path, capture_output=True, timeout=300)
    assert p.returncode == 0, p.stderr
    assert (tmp_path / "p_img.npy").read_bytes() == (tmp_path / "f_img.npy").read_bytes()


def test_encode_to_stdout_needs_a_sidecar_file(tmp_path):
    p = run("encode", *SCENE, "--out", "-", check=False)
    assert p.returncode == 2
    assert p.stderr.startswith("kweave: error: out: standard output needs --sidecar FILE.json")
    assert p.stdout == ""
    p = run("encode", *SCENE, "--out", "-", "--sidecar", "-", check=False)
    assert p.returncode == 2 and "sidecar: needs a file name" in p.stderr


def test_recon_with_a_missing_sidecar_names_it(tmp_path):
    np.save(tmp_path / "k.npy", np.ones((1, 8, 8), np.complex64))
    p = run("recon", "--in", tmp_path / "k.npy", "--sidecar", tmp_path / "none.json",
            "--out", tmp_path / "o.npy", check=False)
    assert p.returncode == 2
    assert p.stderr.startswith("kweave: error: sidecar: ") and "none.json" in p.stderr
    assert not (tmp_path / "o.npy").exists()


def test_the_readme_pipe_runs_as_written(tmp_path):
    text = open(os.path.join(ROOT, "README.md")).read()
    m = re.search(r"\n(kweave encode [^\n]*--out - --sidecar ks\.json \\\n\s*\| kweave recon [^\n]*)\n", text)
    assert m, "the README's pipe example is gone"
    cmd = m.group(1).replace("\\\n", " ").replace("kweave ", f"'{KWEAVE}' ")
    p = subprocess.run(cmd, shell=True, cwd=tmp_path, capture_output=True, timeout=600)
    assert p.returncode == 0, p.stderr
    assert (tmp_path / "img.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert (tmp_path / "ks.json").exists()
