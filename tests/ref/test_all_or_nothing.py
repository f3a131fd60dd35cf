"""Every run is all or nothing (issue 18, "Reliability II").

Each test is named after a defect the adversarial pass found. The rule
(cli/outfile.c, docs/reliability.md): a run's files are written under
temporary names and renamed into place together, only when the whole run
succeeded; an output that is one of the run's inputs (the same device and
inode: names, symbolic links and hard links alike), or that is named twice,
is refused with exit 2 before anything is written; a report that cannot be
written to standard output is a failed run."""
import glob
import os
import resource
import stat
import subprocess

import numpy as np
import pytest

from conftest import KWEAVE


def kw(*args, cwd=None, **kw_):
    return subprocess.run([KWEAVE, *map(str, args)], capture_output=True, cwd=cwd, **kw_)


@pytest.fixture(scope="module")
def data(tmp_path_factory):
    """A small multi-coil acquisition with its truth and sidecar."""
    d = tmp_path_factory.mktemp("aon")
    r = kw("encode", "--phantom", "weave", "--fov", "200mm", "--matrix", "32", "--coils", "2",
           "--out", d / "ks.npy", "--truth", d / "truth.npy")
    assert r.returncode == 0, r.stderr
    return d


def snapshot(d):
    """Names and bytes of every file in d (temporary files included)."""
    return {p: open(os.path.join(d, p), "rb").read() for p in sorted(os.listdir(d))
            if os.path.isfile(os.path.join(d, p))}


def refused(r, what):
    assert r.returncode == 2, r.stderr
    err = r.stderr.decode()
    assert err.count("\n") == 1 and "kweave: error:" in err and what in err, err


def copy_of(data, tmp_path):
    for n in ("ks.npy", "ks.json", "truth.npy"):
        (tmp_path / n).write_bytes((data / n).read_bytes())
    return tmp_path


# ---- an output that is an input ------------------------------------------------------

def test_render_onto_its_input_is_refused(data, tmp_path):
    d = copy_of(data, tmp_path)
    before = snapshot(d)
    refused(kw("render", "--in", d / "truth.npy", "--out", d / "truth.npy"), "is also an input")
    assert snapshot(d) == before


def test_recon_onto_its_kspace_is_refused(data, tmp_path):
    d = copy_of(data, tmp_path)
    before = snapshot(d)
    refused(kw("recon", "--in", d / "ks.npy", "--out", d / "ks.npy"), "is also an input")
    assert snapshot(d) == before


def test_recon_json_onto_the_inputs_own_sidecar_is_refused(data, tmp_path):
    d = copy_of(data, tmp_path)
    before = snapshot(d)
    refused(kw("recon", "--in", d / "ks.npy", "--out", d / "img.npy", "--json", d / "ks.json"),
            "ks.json: is also an input")
    assert snapshot(d) == before


def test_score_json_onto_the_reference_is_refused(data, tmp_path):
    d = copy_of(data, tmp_path)
    before = snapshot(d)
    refused(kw("score", "--ref", d / "truth.npy", "--test", d / "truth.npy", "--json", d / "truth.npy"),
            "is also an input")
    assert snapshot(d) == before


def test_output_through_a_symbolic_link_to_the_input_is_refused(data, tmp_path):
    d = copy_of(data, tmp_path)
    os.symlink("truth.npy", d / "alias.npy")
    before = snapshot(d)
    refused(kw("render", "--in", d / "truth.npy", "--out", d / "alias.npy"), "is also an input")
    assert snapshot(d) == before


def test_output_through_a_hard_link_to_the_input_is_refused(data, tmp_path):
    d = copy_of(data, tmp_path)
    os.link(d / "truth.npy", d / "twin.npy")
    before = snapshot(d)
    refused(kw("render", "--in", d / "truth.npy", "--out", d / "twin.npy"), "is also an input")
    assert snapshot(d) == before


def test_encode_out_and_truth_naming_one_file_is_refused(tmp_path):
    refused(kw("encode", "--phantom", "weave", "--fov", "200mm", "--matrix", "16",
               "--out", tmp_path / "k.npy", "--truth", tmp_path / "k.npy"), "named as two outputs")
    assert os.listdir(tmp_path) == []


def test_two_outputs_through_different_spellings_of_one_name_are_refused(tmp_path):
    (tmp_path / "sub").mkdir()
    refused(kw("encode", "--phantom", "weave", "--fov", "200mm", "--matrix", "16",
               "--out", tmp_path / "k.npy", "--truth", tmp_path / "sub" / ".." / "k.npy"),
            "named as two outputs")
    assert os.listdir(tmp_path) == ["sub"]


# ---- a failed run leaves every old output as it was and no new one -------------------

def old_outputs(d, names):
    for n in names:
        (d / n).write_bytes(b"old " + n.encode())


FAILING_RUNS = {
    # name: (argv after kweave with {d} for the folder, outputs that existed before)
    "recon_out_then_bad_json": (["recon", "--in", "{d}/ks.npy", "--out", "{d}/o.npy",
                                 "--json", "{d}/nodir/r.json"], ["o.npy"]),
    "recon_sens_out_then_bad_out": (["recon", "--in", "{d}/ks.npy", "--combine", "optimal",
                                     "--sens-out", "{d}/m.npy", "--out", "{d}/nodir/o.npy"], ["m.npy"]),
    "score_diff_then_bad_json": (["score", "--ref", "{d}/truth.npy", "--test", "{d}/truth.npy",
                                  "--diff", "{d}/d.png", "--json", "{d}/nodir/s.json"], ["d.png"]),
    "pattern_out_png_psf_then_bad_json": (["pattern", "--kind", "uniform", "--matrix", "32x32",
                                           "--accel", "2", "--acs", "8", "--out", "{d}/p.npy",
                                           "--png", "{d}/p.png", "--psf", "{d}/psf.png",
                                           "--json", "{d}/nodir/p.json"],
                                          ["p.npy", "p.png", "psf.png"]),
    "pattern_golden_then_bad_png": (["pattern", "--kind", "golden", "--matrix", "32", "--spokes", "8",
                                     "--out", "{d}/g.npy", "--png", "{d}/nodir/g.png"],
                                    ["g.npy", "g_times.npy", "g.json"]),
    "encode_truth_then_bad_out": (["encode", "--phantom", "weave", "--fov", "200mm", "--matrix", "16",
                                   "--truth", "{d}/t.npy", "--out", "{d}/nodir/k.npy"], ["t.npy"]),
    "plan_json_then_bad_plot": (["plan", "--fov", "256mm", "--matrix", "128", "--json", "{d}/p.json",
                                 "--plot", "{d}/nodir/t.png"], ["p.json"]),
}


@pytest.mark.parametrize("case", sorted(FAILING_RUNS))
def test_a_failed_run_leaves_old_outputs_untouched(data, tmp_path, case):
    argv, olds = FAILING_RUNS[case]
    d = copy_of(data, tmp_path)
    old_outputs(d, olds)
    before = snapshot(d)
    r = kw(*[a.replace("{d}", str(d)) for a in argv])
    assert r.returncode == 2, (case, r.stderr)
    assert b"nodir" in r.stderr
    assert snapshot(d) == before, case  # no old file replaced, no new or temporary file


def test_a_failed_run_on_a_fresh_folder_writes_nothing(data, tmp_path):
    d = copy_of(data, tmp_path)
    before = snapshot(d)
    r = kw("recon", "--in", d / "ks.npy", "--out", d / "o.npy", "--json", d / "nodir" / "r.json")
    assert r.returncode == 2
    assert snapshot(d) == before


def test_a_successful_run_writes_every_output(data, tmp_path):
    d = copy_of(data, tmp_path)
    r = kw("recon", "--in", d / "ks.npy", "--out", d / "o.npy", "--json", d / "r.json")
    assert r.returncode == 0, r.stderr
    assert np.load(d / "o.npy").shape == (32, 32)
    assert not glob.glob(str(d / ".*kw-*"))


# ---- one consumer of standard output ---------------------------------------------------

@pytest.mark.parametrize("argv", [
    ["recon", "--in", "{d}/ks.npy", "--out", "-", "--json", "-"],
    ["score", "--ref", "{d}/truth.npy", "--test", "{d}/truth.npy", "--diff", "-", "--json", "-"],
])
def test_two_outputs_to_stdout_are_refused(data, tmp_path, argv):
    d = copy_of(data, tmp_path)
    r = kw(*[a.replace("{d}", str(d)) for a in argv])
    refused(r, "standard output ('-') is named as two outputs")


# ---- reports lost on their way out ------------------------------------------------------

REPORTS = {
    "plan": ["plan", "--fov", "256mm", "--matrix", "128"],
    "score": ["score", "--ref", "{d}/truth.npy", "--test", "{d}/truth.npy"],
    "pattern_compare": ["pattern", "--compare", "{d}/m1.npy", "{d}/m2.npy"],
    "encode_tissue_list": ["encode", "--tissue", "list"],
}


def report_argv(data, tmp_path, case):
    d = copy_of(data, tmp_path)
    m = np.zeros((32, 32), np.uint8)
    m[::2] = 1
    np.save(d / "m1.npy", m)
    m[::4] = 1
    m[1::4] = 1
    np.save(d / "m2.npy", m)
    return [a.replace("{d}", str(d)) for a in REPORTS[case]]


@pytest.mark.parametrize("case", sorted(REPORTS))
def test_report_to_a_full_stdout_fails(data, tmp_path, case):
    full = "/dev/full"
    if not (os.path.exists(full) and stat.S_ISCHR(os.stat(full).st_mode)):
        pytest.skip("/dev/full is not a character device here")
    argv = report_argv(data, tmp_path, case)
    assert kw(*argv).returncode == 0  # the same run succeeds with a working stdout
    with open(full, "wb") as f:
        r = subprocess.run([KWEAVE, *argv], stdout=f, stderr=subprocess.PIPE)
    assert r.returncode == 2, (case, r.stderr)
    assert b"standard output" in r.stderr


@pytest.mark.parametrize("case", sorted(REPORTS))
def test_report_to_a_closed_stdout_fails(data, tmp_path, case):
    argv = report_argv(data, tmp_path, case)
    r = subprocess.run([KWEAVE, *argv], stderr=subprocess.PIPE,
                       preexec_fn=lambda: os.close(1))
    assert r.returncode == 2, (case, r.stderr)
    assert b"standard output" in r.stderr


# ---- limits and signals ------------------------------------------------------------------

def test_file_size_limit_is_a_write_error(data, tmp_path):
    """Under `ulimit -f` SIGXFSZ used to kill the run without a word and leave
    its temporary file."""
    d = copy_of(data, tmp_path)
    before = snapshot(d)

    def limit():
        resource.setrlimit(resource.RLIMIT_FSIZE, (4096, 4096))

    r = subprocess.run([KWEAVE, "recon", "--in", str(d / "ks.npy"), "--out", str(d / "o.npy")],
                       capture_output=True, preexec_fn=limit)
    assert r.returncode == 2, r.stderr
    assert b"o.npy" in r.stderr and b"write failed" in r.stderr
    assert snapshot(d) == before


def test_an_output_name_of_254_bytes_is_written(data, tmp_path):
    """The temporary name used to be 11 bytes longer than the target and so
    exceeded NAME_MAX (255)."""
    d = copy_of(data, tmp_path)
    name = "i" * 250 + ".npy"
    r = kw("recon", "--in", d / "ks.npy", "--out", d / name)
    assert r.returncode == 0, r.stderr
    assert np.load(d / name).shape == (32, 32)
    assert not glob.glob(str(d / ".*kw-*"))


def test_recon_hdf5_output_onto_its_hdf5_input_is_refused(data, tmp_path):
    h5py = pytest.importorskip("h5py")
    d = copy_of(data, tmp_path)
    with h5py.File(d / "raw.h5", "w") as f:
        f["kspace"] = np.load(d / "ks.npy")
    before = snapshot(d)
    refused(kw("recon", "--in", f"{d}/raw.h5:/kspace", "--fov", "200mm", "--out", f"{d}/raw.h5:/image"),
            "is also an input")
    assert snapshot(d) == before


@pytest.mark.parametrize("argv", [
    ["plan", "--fov", "256mm", "--matrix", "128", "--json", "-"],
    ["pattern", "--kind", "uniform", "--matrix", "32x32", "--accel", "2", "--out", "{d}/u.npy",
     "--json", "-"],
    ["pattern", "--kind", "golden", "--matrix", "32", "--spokes", "8", "--out", "{d}/g.npy",
     "--json", "-"],
    ["score", "--ref", "{d}/truth.npy", "--test", "{d}/truth.npy", "--json", "-"],
])
def test_json_to_stdout_is_the_only_report_there(data, tmp_path, argv):
    """One consumer of stdout: with --json - the text report is set aside, so
    stdout parses as one JSON value."""
    import json
    d = copy_of(data, tmp_path)
    r = kw(*[a.replace("{d}", str(d)) for a in argv])
    assert r.returncode == 0, r.stderr
    json.loads(r.stdout)


def test_compare_with_too_many_files_says_so(data, tmp_path):
    m = np.zeros((16, 16), np.uint8)
    m[::2] = 1
    np.save(tmp_path / "m.npy", m)
    files = [tmp_path / "m.npy"] * 9
    refused(kw("pattern", "--compare", *files), "one file too many (at most 8")
