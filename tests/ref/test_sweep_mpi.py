"""`kweave sweep` under `mpirun -np 2` gives the same rows as the local run,
byte for byte after sorting and after dropping the run_time_s and host
columns. Skipped when this kweave was built without MPI (no mpicc, MPI=0,
sanitizer builds) or mpirun is missing."""
import json
import os
import shutil
import subprocess

import pytest

from conftest import KWEAVE, run
from test_sweep import NROWS, TINY, drop_run_columns, table, write_spec


def mpi_built(tmp_path):
    spec = write_spec(tmp_path / "tiny.json", TINY)
    return "MPI: built in" in run("sweep", "--spec", spec, "--dry-run").stdout


def test_mpi_two_ranks_same_rows(tmp_path):
    if not mpi_built(tmp_path) or not shutil.which("mpirun"):
        pytest.skip("kweave built without MPI, or no mpirun")
    spec = write_spec(tmp_path / "tiny.json", TINY)
    # Each run starts from an empty FFTW wisdom cache of its own (issue 18):
    # the table must not depend on plans measured by one rank or another.
    env_local = dict(os.environ, KWEAVE_WISDOM=str(tmp_path / "wisdom-local"))
    env_mpi = dict(os.environ, KWEAVE_WISDOM=str(tmp_path / "wisdom-mpi"))
    p = subprocess.run([KWEAVE, "sweep", "--spec", str(spec), "--out", str(tmp_path / "local"),
                        "--jobs", "2"], capture_output=True, text=True, env=env_local, timeout=300)
    assert p.returncode == 0, p.stderr
    p = subprocess.run(["mpirun", "--oversubscribe", "--allow-run-as-root", "-np", "2",
                        KWEAVE, "sweep", "--spec", str(spec), "--out", str(tmp_path / "mpi")],
                       capture_output=True, text=True, env=env_mpi, timeout=300)
    assert p.returncode == 0, p.stderr
    assert f"{NROWS} of {NROWS} experiments done" in p.stderr
    mpi, local = table(tmp_path / "mpi"), table(tmp_path / "local")
    assert len(mpi) == 1 + NROWS
    assert drop_run_columns(mpi) == drop_run_columns(local)
    res = json.loads((tmp_path / "mpi" / "results.json").read_text())
    assert res["done"] == NROWS


def test_without_mpi_refuses_launcher(tmp_path):
    """A kweave without MPI started by a launcher says so (exit 2) rather than
    running the whole sweep once per rank into the same folder."""
    if mpi_built(tmp_path):
        pytest.skip("this kweave has MPI")
    spec = write_spec(tmp_path / "tiny.json", TINY)
    env = dict(os.environ, OMPI_COMM_WORLD_SIZE="2")
    p = subprocess.run([KWEAVE, "sweep", "--spec", str(spec), "--out", str(tmp_path / "o")],
                       capture_output=True, text=True, env=env, timeout=60)
    assert p.returncode == 2 and "without MPI" in p.stderr
