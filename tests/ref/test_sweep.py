"""`kweave sweep`: a tiny sweep run locally; its scores recomputed with
numpy and scikit-image 0.19 (Debian's python3-skimage, same settings as
test_score_skimage.py); the seeds recomputed from the published FNV-1a hash
(Fowler/Noll/Vo, draft-eastlake-fnv: offset basis 14695981039346656037,
prime 1099511628211; test vectors "" -> cbf29ce484222325 and
"a" -> af63dc4c8601ec8c from that draft, recalled from memory) and the
library's kw_rng_mix; a run of a sub-grid gives the same rows (the result
does not depend on where or in what order an experiment ran); a sweep killed
with SIGTERM and started again ends with every row exactly once; bad specs
are refused before anything runs."""
import csv
import ctypes
import json
import os
import signal
import subprocess
import time

import numpy as np
import pytest
from skimage.metrics import peak_signal_noise_ratio, structural_similarity

from conftest import KWEAVE, bad, run

TINY = {
    "title": "tiny sweep for the tests",
    "phantom": "weave", "matrix": 64, "coils": 4, "snr": 30,
    "patterns": [{"kind": "uniform", "acs": 12}, {"kind": "poisson", "acs": 12}],
    "acceleration": [2, 4], "seeds": [1, 2],
    "methods": ["fft", {"name": "cg-sense", "iterations": 10}],
}
NROWS = 2 * 2 * 2 * 2


def write_spec(path, spec):
    path.write_text(json.dumps(spec))
    return path


def table(folder):
    with open(folder / "results.csv", newline="") as f:
        return list(csv.reader(f))


def drop_run_columns(rows):
    """The rows without run_time_s and host (the last two columns), sorted."""
    assert rows[0][-2:] == ["run_time_s", "host"]
    return sorted(",".join(r[:-2]) for r in rows[1:])


def fnv1a64(s):
    h = 14695981039346656037
    for b in s.encode():
        h ^= b
        h = (h * 1099511628211) % (1 << 64)
    return h


def test_fnv1a_vectors():
    assert fnv1a64("") == 0xcbf29ce484222325
    assert fnv1a64("a") == 0xaf63dc4c8601ec8c


@pytest.fixture(scope="module")
def tiny(tmp_path_factory):
    d = tmp_path_factory.mktemp("sweep")
    spec = write_spec(d / "tiny.json", TINY)
    p = run("sweep", "--spec", spec, "--out", d / "out", "--keep-files", "--jobs", 2)
    assert "16 of 16 experiments done" in p.stderr
    return d, spec


def test_local_tables(tiny):
    d, _ = tiny
    rows = table(d / "out")
    head = rows[0]
    assert head[-5:] == ["nrmse", "psnr_db", "ssim", "run_time_s", "host"]
    assert len(rows) == 1 + NROWS
    ids = [r[0] for r in rows[1:]]
    assert len(set(ids)) == NROWS
    res = json.loads((d / "out" / "results.json").read_text())
    assert res["done"] == NROWS and len(res["rows"]) == NROWS
    assert res["columns"] == head
    for r, j in zip(rows[1:], res["rows"]):
        rec = dict(zip(head, r))
        assert rec["id"] == j["id"] and rec["status"] == "ok" == j["status"]
        assert float(rec["nrmse"]) == j["nrmse"] and float(rec["ssim"]) == j["ssim"]
        assert float(rec["run_time_s"]) > 0
    # the journal: one complete JSON object per experiment
    lines = (d / "out" / "journal.jsonl").read_text().splitlines()
    assert sorted(json.loads(l)["id"] for l in lines) == sorted(ids)
    for m in ("nrmse", "psnr_db", "ssim"):
        png = (d / "out" / f"summary_{m}.png").read_bytes()
        assert png[:8] == b"\x89PNG\r\n\x1a\n"


def test_scores_against_skimage(tiny):
    """Every row's scores recomputed from the kept truth and image."""
    d, _ = tiny
    res = json.loads((d / "out" / "results.json").read_text())
    for j in res["rows"]:
        group = j["key"].split(" method=")[0]
        folder = d / "out" / "scratch" / ("%016x" % fnv1a64(group))
        r = np.abs(np.load(folder / "truth.npy")).astype(np.float64)
        t = np.abs(np.load(folder / f"img_{j['id']}.npy")).astype(np.float64)
        nrmse = np.linalg.norm(t - r) / np.linalg.norm(r)
        assert abs(j["nrmse"] - nrmse) <= 1e-6 * nrmse
        psnr = peak_signal_noise_ratio(r, t, data_range=r.max())
        assert abs(j["psnr_db"] - psnr) <= 1e-6 * psnr
        ssim = structural_similarity(r, t, gaussian_weights=True, sigma=1.5,
                                     use_sample_covariance=False, data_range=r.max() - r.min())
        assert abs(j["ssim"] - ssim) <= 1e-3
    # what the table says, in the physics: at the same R, CG-SENSE (which
    # unfolds with the coil maps) beats the zero-filled FFT on every group
    by = {}
    for j in res["rows"]:
        by.setdefault(j["key"].split(" method=")[0], {})[j["method"]] = j["nrmse"]
    for g, m in by.items():
        assert m["cg-sense"] < m["fft"], (g, m)


def test_seeds_from_the_parameters(tiny, lib):
    d, _ = tiny
    lib.kw_rng_mix.restype = ctypes.c_uint64
    lib.kw_rng_mix.argtypes = [ctypes.c_uint64, ctypes.c_uint64]
    res = json.loads((d / "out" / "results.json").read_text())
    for j in res["rows"]:
        assert j["id"] == "%016x" % fnv1a64(j["key"])
        h = fnv1a64(j["key"].split(" method=")[0])
        assert j["pattern_seed"] == lib.kw_rng_mix(h, 1) >> 33
        assert j["noise_seed"] == lib.kw_rng_mix(h, 2) >> 33


def test_subgrid_gives_the_same_rows(tiny, tmp_path):
    """One corner of the grid run alone, in another folder, one job."""
    d, _ = tiny
    sub = dict(TINY, patterns=[{"kind": "poisson", "acs": 12}], acceleration=[4], seeds=[2])
    spec = write_spec(tmp_path / "sub.json", sub)
    run("sweep", "--spec", spec, "--out", tmp_path / "o", "--jobs", 1)
    mine = drop_run_columns(table(tmp_path / "o"))
    full = set(drop_run_columns(table(d / "out")))
    assert len(mine) == 2 and all(r in full for r in mine)


def test_kill_and_resume(tiny, tmp_path):
    d, spec = tiny
    out = tmp_path / "k"
    p = subprocess.Popen([KWEAVE, "sweep", "--spec", str(spec), "--out", str(out), "--jobs", "2"],
                         stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    journal = out / "journal.jsonl"
    t0 = time.time()
    while time.time() - t0 < 60:
        if journal.exists() and journal.read_text().count("\n") >= 2:
            break
        time.sleep(0.01)
    p.send_signal(signal.SIGTERM)
    p.communicate(timeout=60)
    assert p.returncode == -signal.SIGTERM
    done_before = journal.read_text().count("\n")
    assert 2 <= done_before < NROWS, "killed too late to test a resume"
    assert not (out / "results.csv").exists() or len(table(out)) - 1 <= done_before
    # a torn last line, as if the machine had died inside a write
    with open(journal, "ab") as f:
        f.write(b'{"id": "00000000000')
    q = run("sweep", "--spec", spec, "--out", out, "--jobs", 2)
    assert f"({NROWS - done_before} now)" in q.stderr
    lines = journal.read_text().splitlines()
    ids = [json.loads(l)["id"] for l in lines]
    assert len(ids) == NROWS == len(set(ids))
    assert drop_run_columns(table(out)) == drop_run_columns(table(d / "out"))
    # a third run has nothing left to do
    q = run("sweep", "--spec", spec, "--out", out)
    assert "(0 now)" in q.stderr and journal.read_text().count("\n") == NROWS


@pytest.mark.parametrize("change,field", [
    ({"noise": [1]}, "spec.noise"),
    ({"methods": ["fft", "sense-magic"]}, "spec.methods[1].name"),
    ({"methods": [{"name": "cs-tv", "lamda": 0.1}]}, "spec.methods[0].lamda"),
    ({"coils": []}, "spec.coils"),
    ({"coils": [0]}, "spec.coils"),
    ({"snr": [-3]}, "spec.snr"),
    ({"acceleration": [2, 40]}, "spec.acceleration"),
    ({"seeds": [1.5]}, "spec.seeds"),
    ({"matrix": 100000}, "spec.matrix"),
    ({"phantom": "brain"}, "spec.phantom"),
    ({"patterns": [{"kind": "zigzag"}]}, "spec.patterns[0].kind"),
    ({"patterns": [{"kind": "poisson", "acs": -1}]}, "spec.patterns[0].acs"),
    ({"patterns": [{"kind": "partial", "fraction": 0.3}]}, "spec.patterns[0].fraction"),
    ({"methods": [{"name": "cg-sense", "iterations": [0]}]}, "spec.methods[0].iterations"),
    ({"methods": [{"name": "cs-tv", "lambda": [-1]}]}, "spec.methods[0].lambda"),
    ({"patterns": [{"kind": "radial"}], "methods": ["sense"]}, "spec.methods"),
    ({"seeds": [1, 1]}, "spec"),
])
def test_bad_spec(tmp_path, change, field):
    spec = dict(TINY, **change)
    path = tmp_path / "bad.json"
    path.write_text(json.dumps(spec))
    bad("sweep", "--spec", path, "--out", tmp_path / "o", field=field)
    assert not (tmp_path / "o").exists(), "refused only after starting"


def test_bad_spec_files(tmp_path):
    bad("sweep", "--spec", tmp_path / "none.json", "--out", tmp_path / "o", field="spec")
    (tmp_path / "t.json").write_text("{\"phantom\": ")
    bad("sweep", "--spec", tmp_path / "t.json", "--out", tmp_path / "o", field="spec")
    (tmp_path / "a.json").write_text("[1, 2]")
    bad("sweep", "--spec", tmp_path / "a.json", "--out", tmp_path / "o", field="spec")
    missing = {k: v for k, v in TINY.items() if k != "methods"}
    write_spec(tmp_path / "m.json", missing)
    bad("sweep", "--spec", tmp_path / "m.json", "--out", tmp_path / "o", field="spec.methods")
    write_spec(tmp_path / "ok.json", TINY)
    bad("sweep", "--spec", tmp_path / "ok.json", field="out")
    bad("sweep", "--spec", tmp_path / "ok.json", "--out", tmp_path / "o", "--jobs", 0 - 1,
        field="jobs")
    assert not (tmp_path / "o").exists()


def test_sample_spec_is_valid():
    here = os.path.dirname(__file__)
    p = run("sweep", "--spec", os.path.join(here, "..", "..", "samples", "sweep-patterns.json"),
            "--dry-run")
    assert "96 experiments in 32 data groups" in p.stdout


def test_tables_identical_from_empty_and_measured_wisdom(tmp_path):
    """Issue 18: sweeps from an empty FFTW wisdom cache gave tables differing in
    the last bits (plans chosen by timing). A sweep now plans without timing
    and without the cache (kw_fft_set_reproducible): two runs from empty
    caches and one from a cache holding measured plans for its sizes give the
    same rows, byte for byte (run time and host aside)."""
    spec = dict(TINY, patterns=[{"kind": "poisson", "acs": 12}], seeds=[1])
    spec_path = write_spec(tmp_path / "spec.json", spec)
    measured = tmp_path / "measured-wisdom"
    # measured plans for the sweep's sizes (64 x 64, 4 coils) into a cache
    env = dict(os.environ, KWEAVE_WISDOM=str(measured))
    subprocess.run([KWEAVE, "encode", "--phantom", "weave", "--matrix", "64", "--fov", "256mm",
                    "--coils", "4", "--out", tmp_path / "ks.npy"], env=env, check=True,
                   capture_output=True)
    subprocess.run([KWEAVE, "recon", "--in", tmp_path / "ks.npy", "--out", tmp_path / "img.npy"],
                   env=env, check=True, capture_output=True)
    assert measured.stat().st_size > 0
    before = measured.read_bytes()
    tables = []
    for i, cache in enumerate([tmp_path / "empty1", tmp_path / "empty2", measured]):
        env = dict(os.environ, KWEAVE_WISDOM=str(cache), OMP_NUM_THREADS="2")
        p = subprocess.run([KWEAVE, "sweep", "--spec", spec_path, "--out", tmp_path / f"out{i}",
                            "--jobs", "2"], env=env, capture_output=True, text=True, timeout=600)
        assert p.returncode == 0, p.stderr
        tables.append(drop_run_columns(table(tmp_path / f"out{i}")))
    assert tables[0] == tables[1] == tables[2]
    assert measured.read_bytes() == before  # the user's cache is left as it was


def test_a_sparse_2gib_journal_is_refused_untouched(tmp_path):
    """Issue 18: a 2 GiB sparse journal was read whole (2 GiB RSS), then cut
    to 0 bytes. The journal is read a line at a time; a line over 1 MiB is
    not ours: exit 2, the file left as it is, little memory used."""
    spec = write_spec(tmp_path / "s.json", dict(TINY, patterns=[{"kind": "uniform", "acs": 12}],
                                                acceleration=[2], seeds=[1], methods=["fft"]))
    out = tmp_path / "o"
    out.mkdir()
    j = out / "journal.jsonl"
    with open(j, "wb") as f:
        f.truncate(2 << 30)
    code = (
        "import resource, subprocess, sys\n"
        "p = subprocess.run(sys.argv[1:], capture_output=True)\n"
        "print(p.returncode, resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)\n"
        "sys.stderr.write(p.stderr.decode())\n")
    p = subprocess.run(["/usr/bin/python3", "-c", code, KWEAVE, "sweep", "--spec", str(spec),
                        "--out", str(out)], capture_output=True, text=True, timeout=600)
    rc, kib = map(int, p.stdout.split())
    assert rc == 2, p.stderr
    assert "longer than 1 MiB" in p.stderr
    assert kib < 100 * 1024, f"peak RSS {kib} KiB"
    assert j.stat().st_size == 2 << 30


def test_a_journal_that_is_a_folder_is_refused(tmp_path):
    spec = write_spec(tmp_path / "s.json", dict(TINY, patterns=[{"kind": "uniform", "acs": 12}],
                                                acceleration=[2], seeds=[1], methods=["fft"]))
    out = tmp_path / "o"
    (out / "journal.jsonl").mkdir(parents=True)
    bad("sweep", "--spec", spec, "--out", out, field="journal")
