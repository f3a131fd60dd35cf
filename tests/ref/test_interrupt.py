"""An interrupted run leaves no partial file (issue 9).

`kweave render` of a large stack spends a second or more compressing the PNG
into its temporary file (cli/outfile.c: hidden ".<name>.kw-XXXXXX" beside the
target). The test waits until that temporary file exists, sends SIGINT or
SIGTERM, and checks that the process died of the signal and that neither the
target nor the temporary file is left. A second test interrupts a run that is
still reading its input from a pipe."""
import glob
import io
import os
import resource
import signal
import subprocess
import time

import numpy as np
import pytest

from conftest import KWEAVE


@pytest.fixture(scope="module")
def big(tmp_path_factory):
    d = tmp_path_factory.mktemp("big")
    p = d / "stack.npy"
    np.save(p, np.random.default_rng(0).uniform(0, 1, (4, 2048, 2048)).astype(np.float32))
    return p


# SIGQUIT, SIGUSR1 and SIGALRM: issue 18 (they used to leave the temporary file)
@pytest.mark.parametrize("sig", [signal.SIGINT, signal.SIGTERM, signal.SIGQUIT, signal.SIGUSR1,
                                 signal.SIGALRM])
def test_signal_mid_write_leaves_nothing(tmp_path, big, sig):
    out = tmp_path / "o.png"
    # no core file from SIGQUIT, and none outside the test's folder
    p = subprocess.Popen([KWEAVE, "render", "--in", str(big), "--out", str(out), "--depth", "16"],
                         stderr=subprocess.PIPE, cwd=tmp_path,
                         preexec_fn=lambda: resource.setrlimit(resource.RLIMIT_CORE, (0, 0)))
    pattern = str(tmp_path / ".o.png.kw-*")
    seen = False
    t0 = time.monotonic()
    while time.monotonic() - t0 < 120 and p.poll() is None:
        tmps = glob.glob(pattern)
        if tmps and os.path.getsize(tmps[0]) > 0:  # compressed data is going in
            seen = True
            p.send_signal(sig)
            break
        time.sleep(0.001)
    p.communicate(timeout=120)
    assert seen, "the run ended before its temporary file was seen; make the input larger"
    assert p.returncode == -sig, f"exit {p.returncode}: expected death by signal {sig}"
    assert os.listdir(tmp_path) == [], os.listdir(tmp_path)


def test_signal_while_reading_a_pipe(tmp_path):
    out = tmp_path / "o.png"
    p = subprocess.Popen([KWEAVE, "render", "--in", "-", "--out", str(out)],
                         stdin=subprocess.PIPE, stderr=subprocess.PIPE)
    b = io.BytesIO()
    np.save(b, np.ones((512, 512), np.float32))
    p.stdin.write(b.getvalue()[:100000])  # header and part of the data, then stall
    p.stdin.flush()
    time.sleep(0.3)
    p.send_signal(signal.SIGINT)
    p.communicate(timeout=60)
    assert p.returncode == -signal.SIGINT
    assert os.listdir(tmp_path) == []
