"""Fixtures of the Python package's tests (tests/python).

`make test-python` builds python/kweave in place and runs these with
PYTHONPATH=python and KWEAVE=build/kweave. The comparisons with the command
share one FFTW wisdom file: the command runs first with KWEAVE_WISDOM set to
it, then `cli.sync()` imports the same wisdom into this process, so that
both plan alike and the arrays can be compared bit for bit.
"""
import json
import os
import subprocess

import numpy as np
import pytest

import kweave

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
KWEAVE = os.environ.get("KWEAVE", os.path.join(ROOT, "build", "kweave"))


class Cli:
    """Runs `kweave VERB ...` in a temporary folder with a shared wisdom."""

    def __init__(self, tmp):
        self.tmp = str(tmp)
        self.wisdom = os.path.join(self.tmp, "fftw-wisdom")

    def path(self, name):
        return os.path.join(self.tmp, name)

    def run(self, *args, check=True):
        env = dict(os.environ, KWEAVE_WISDOM=self.wisdom)
        p = subprocess.run([KWEAVE] + [str(a) for a in args], cwd=self.tmp, env=env,
                           capture_output=True, text=True)
        if check and p.returncode != 0:
            raise AssertionError(f"kweave {' '.join(map(str, args))}: exit {p.returncode}\n"
                                 f"{p.stderr}")
        return p

    def sync(self):
        """Import the command's wisdom into this process."""
        if os.path.exists(self.wisdom):
            with open(self.wisdom) as f:
                kweave.fft_wisdom_import(f.read())

    def save(self, name, arr):
        np.save(self.path(name), arr)
        return self.path(name)

    def load(self, name):
        return np.load(self.path(name))

    def json(self, name):
        with open(self.path(name)) as f:
            return json.load(f)

    def error(self, *args):
        """The command's error line without "kweave: error: " and its
        leading "--" (the package names keywords without dashes)."""
        p = self.run(*args, check=False)
        assert p.returncode == 2, (p.returncode, p.stderr)
        line = p.stderr.strip().splitlines()[-1]
        assert line.startswith("kweave: error: "), line
        msg = line[len("kweave: error: "):]
        return msg[2:] if msg.startswith("--") else msg


@pytest.fixture
def cli(tmp_path):
    return Cli(tmp_path)


def same_bits(a, b):
    """Equal dtype, shape and bytes."""
    a = np.asarray(a)
    b = np.asarray(b)
    return a.dtype == b.dtype and a.shape == b.shape and a.tobytes() == b.tobytes()
