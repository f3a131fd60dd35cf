"""samples/compare_patterns.py runs as the README says and writes its table:
three patterns x two methods, every score finite and each reconstruction
better than a coin toss (NRMSE < 0.2 against the truth, SSIM > 0.5)."""
import csv
import os
import subprocess
import sys

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))


def test_compare_patterns_writes_its_table(tmp_path):
    script = os.path.join(ROOT, "samples", "compare_patterns.py")
    assert sum(1 for _ in open(script)) <= 40
    env = dict(os.environ, PYTHONPATH=os.path.join(ROOT, "python"))
    p = subprocess.run([sys.executable, script, str(tmp_path / "t.csv")], env=env,
                       capture_output=True, text=True, timeout=600)
    assert p.returncode == 0, p.stderr
    rows = list(csv.DictReader(open(tmp_path / "t.csv")))
    assert [(r["pattern"], r["method"]) for r in rows] == [
        (k, m) for k in ("uniform", "random", "poisson") for m in ("cg-sense", "cs-wavelet")]
    for r in rows:
        assert 0 < float(r["NRMSE"]) < 0.2 and float(r["SSIM"]) > 0.5, r
    assert p.stdout.splitlines()[0].split()[0] == "pattern" and len(p.stdout.splitlines()) == 7
