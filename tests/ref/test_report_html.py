"""report.html of `kweave demo` and `kweave sweep` (cli/html_report.c):
self-contained (every picture the run wrote embedded byte for byte as a
base64 data: URI, no scripts, no external references), the numbers as tables,
the safety caution beside gradient, RF and timing numbers, every text from a
file HTML-escaped, the same bytes from the same run; and opened in headless
Chromium (Debian's chromium), it renders without console messages and every
<img> loads (naturalWidth > 0).

The Chromium check works on a copy of the page, written into the test's
temporary folder: the copy's Content-Security-Policy (kept, so that anything
external is still refused and reported) gains script-src 'unsafe-inline' for
a small probe that records errors, policy violations and console.error /
console.warn, and after the load event appends the count of loaded images to
the DOM, which --dump-dom prints. Chromium's own log (--enable-logging=stderr)
must hold no CONSOLE line either. Skipped, saying so, when chromium is absent
(scripts/deps.sh test installs it)."""
import base64
import ctypes
import html
import json
import os
import re
import shutil
import struct
import subprocess
import zlib
from html.parser import HTMLParser

import pytest

from conftest import run

CAUTION_START = "Caution: gradient amplitude and slew-rate limits"
CHROMIUM = shutil.which("chromium")

SWEEP = {
    "title": "report.html of a tiny sweep",
    "phantom": "weave", "matrix": 32, "coils": 4, "snr": 30,
    "patterns": [{"kind": "uniform", "acs": 8}, {"kind": "random", "acs": 0}],
    "acceleration": [2], "seeds": [1, 2],
    "methods": ["fft", "sense"],
}


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    d = tmp_path_factory.mktemp("demo")
    run("demo", "--out", d / "a")
    run("demo", "--out", d / "b")
    return d


@pytest.fixture(scope="module")
def sweep(tmp_path_factory):
    d = tmp_path_factory.mktemp("sweep")
    spec = d / "spec.json"
    spec.write_text(json.dumps(SWEEP))
    run("sweep", "--spec", spec, "--out", d / "out", "--jobs", 2, "--pictures", "--quiet")
    return d / "out"


def tiny_png():
    """A 2 x 2 8-bit grey PNG (PNG specification, ISO/IEC 15948: signature,
    IHDR, IDAT of filtered rows, IEND, each chunk with its CRC-32)."""
    def chunk(kind, data):
        return (struct.pack(">I", len(data)) + kind + data
                + struct.pack(">I", zlib.crc32(kind + data) & 0xffffffff))
    raw = b"\x00\x00\xff\x00\x80\x40"
    return (b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", struct.pack(">IIBBBBB", 2, 2, 8, 0, 0, 0, 0))
            + chunk(b"IDAT", zlib.compress(raw)) + chunk(b"IEND", b""))


class Page(HTMLParser):
    """Tags, images (src, alt), captions, table cells and the text; checks
    that every element opened is closed in order."""
    VOID = {"meta", "img", "br", "hr", "link", "input"}

    def __init__(self, text):
        super().__init__(convert_charrefs=True)
        self.stack, self.tags, self.imgs, self.captions, self.cells = [], [], [], [], []
        self.text, self._cap, self._cell = [], None, None
        self.feed(text)
        self.close()
        assert not self.stack, f"elements left open: {self.stack}"

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags.append((tag, a))
        if tag == "img":
            self.imgs.append(a)
        if tag not in self.VOID:
            self.stack.append(tag)
        if tag == "figcaption":
            self._cap = []
        if tag in ("td", "th"):
            self._cell = []

    def handle_endtag(self, tag):
        assert self.stack and self.stack[-1] == tag, f"</{tag}> closes {self.stack[-1:]}"
        self.stack.pop()
        if tag == "figcaption":
            self.captions.append("".join(self._cap))
            self._cap = None
        if tag in ("td", "th"):
            self.cells.append("".join(self._cell).strip())
            self._cell = None

    def handle_data(self, data):
        self.text.append(data)
        if self._cap is not None:
            self._cap.append(data)
        if self._cell is not None:
            self._cell.append(data)


def self_contained(folder, pictures):
    """Parse folder/report.html; every picture in `pictures` (paths relative
    to folder) is embedded exactly once, byte for byte, with a caption."""
    text = (folder / "report.html").read_text(encoding="utf-8")
    page = Page(text)
    assert not re.search(r"<script|<link|<iframe|<object|<embed|\burl\(|@import", text, re.I)
    assert not re.search(r"\b(?:src|href)\s*=\s*\"(?!data:image/png;base64,)", text)
    assert "http://" not in text and "https://" not in text and "file:" not in text
    assert str(folder) not in text, "an absolute path in the page"
    got = {}
    for img in page.imgs:
        src = img["src"]
        assert src.startswith("data:image/png;base64,")
        got[img["alt"]] = base64.b64decode(src.split(",", 1)[1], validate=True)
    assert sorted(got) == sorted(pictures) and len(page.imgs) == len(pictures)
    for rel in pictures:
        assert got[rel] == (folder / rel).read_bytes(), rel
    assert len(page.captions) == len(pictures)
    for rel, cap in zip((i["alt"] for i in page.imgs), page.captions):
        assert cap.startswith(rel + ": ") and len(cap) > len(rel) + 10, cap
    return text, page


def test_demo_page(demo):
    a = demo / "a"
    pngs = sorted(p.name for p in a.glob("*.png"))
    assert {"truth.png", "recon.png", "kspace.png", "difference.png"} <= set(pngs)
    text, page = self_contained(a, pngs)
    # known pictures first, in the story's order
    order = [i["alt"] for i in page.imgs]
    known = [n for n in ("truth.png", "kspace.png", "coil_maps.png", "recon.png",
                         "difference.png") if n in pngs]
    assert order[:len(known)] == known
    # the numbers, read from the steps' JSON files, as tables
    plan = json.loads((a / "plan.json").read_text())
    score = json.loads((a / "score.json").read_text())
    ks = json.loads((a / "kspace.json").read_text())
    cells = page.cells
    assert f"{plan['larmor_hz'] / 1e6:.4f} MHz" in cells
    assert f"{plan['te_s'] * 1e3:.4f} ms" in cells and f"{plan['tr_s'] * 1e3:.4f} ms" in cells
    assert f"{plan['readout_gradient_T_per_m'] * 1e3:.4f} mT/m" in cells
    assert f"{score['nrmse']:.4f}" in cells and f"{score['psnr_db']:.2f} dB" in cells
    assert f"{score['ssim']:.4f}" in cells
    assert f"{ks['protocol']['flip_deg']:g} degrees" in cells
    for lim in plan["limits"]:
        assert lim["name"] in cells
    for tissue in ks["tissues"]:
        assert tissue in cells
    # the caution beside the plan's and the acquisition's numbers, escaped
    caution = json.loads((a / "plan.json").read_text())["safety_caution"]
    assert "".join(page.text).count(caution) == 2
    assert text.count(caution.replace("'", "&#39;")) == 2
    assert page.tags[0][0] == "html" and page.tags[0][1].get("lang") == "en"


def test_demo_page_deterministic(demo):
    """Two runs into different folders give the same bytes (no dates, no paths)."""
    assert (demo / "a" / "report.html").read_bytes() == (demo / "b" / "report.html").read_bytes()


def test_sweep_page(sweep):
    pics = sorted("pictures/" + p.name for p in (sweep / "pictures").glob("*.png"))
    summary = sorted(p.name for p in sweep.glob("summary_*.png"))
    assert len(pics) == 6 and len(summary) == 3
    text, page = self_contained(sweep, summary + pics)
    res = json.loads((sweep / "results.json").read_text())
    cells = page.cells
    for r in res["rows"]:
        assert r["id"] in cells
        if r["status"] == "ok":
            assert f"{r['nrmse']:.4f}" in cells and f"{r['ssim']:.4f}" in cells
        else:
            assert r["status"] in cells  # a refused method keeps its reason
    # mean over the two seeds of uniform + fft
    rows = [r for r in res["rows"] if r["pattern"] == "uniform" and r["method"] == "fft"]
    assert f"{sum(r['psnr_db'] for r in rows) / 2:.2f}" in cells
    assert "0 of 2" in cells  # sense on the random pattern: no scores
    # the host and the run time change from run to run: not on the page
    assert rows[0]["host"] not in "".join(page.text).replace("kweave", "")


def test_escaping_and_unknown_pictures(tmp_path):
    """Text from the files is escaped; a picture of unknown name gets the
    generic caption (called through ctypes on a folder made up here)."""
    lib = os.environ.get("KWEAVE_CLI_LIB")
    if not lib:
        pytest.skip("ctypes checks need KWEAVE_CLI_LIB")
    cli = ctypes.CDLL(lib)
    evil = "<img src=x onerror=alert(1)> & \"q\" 'a'"
    (tmp_path / "plan.json").write_text(json.dumps({"sequence": evil, "limits": [
        {"name": evil, "required": 1, "available": 2, "margin": 1, "unit": "s", "ok": True}],
        "lobes": {evil: {"amplitude_T_per_m": 0.01}}}))
    (tmp_path / "kspace.json").write_text(json.dumps({"phantom": evil, "tissues": {evil: {}}}))
    (tmp_path / "score.json").write_text("{not json")
    one = tiny_png()
    (tmp_path / 'odd "name" & <x>.png').write_bytes(one)
    (tmp_path / "truth.png").write_bytes(one)
    cli.kw_html_demo.argtypes = [ctypes.c_char_p, ctypes.c_char_p, ctypes.c_long]
    assert cli.kw_html_demo(str(tmp_path).encode(), evil.encode(), 7) == 0
    text, page = self_contained(tmp_path, ["truth.png", 'odd "name" & <x>.png'])
    assert "<img src=x" not in text and "alert(1)> &" not in text
    assert sum(evil in c for c in page.cells) >= 4 and evil in "".join(page.text)
    assert page.captions[1].endswith("a picture the demo wrote.")


def chromium_check(page, tmp):
    """Open a probed copy of `page` in headless Chromium; returns (loaded,
    total, messages)."""
    text = page.read_text(encoding="utf-8")
    assert "default-src 'none';" in text
    text = text.replace("default-src 'none';", "default-src 'none'; script-src 'unsafe-inline';", 1)
    probe = """<script>
var kwErr = [];
window.addEventListener('error', function (e) {
  kwErr.push('error: ' + (e.message || (e.target && e.target.tagName))); }, true);
document.addEventListener('securitypolicyviolation', function (e) {
  kwErr.push('policy: ' + e.violatedDirective + ' ' + e.blockedURI); });
['error', 'warn'].forEach(function (k) { var o = console[k];
  console[k] = function () { kwErr.push(k + ': ' + Array.prototype.join.call(arguments, ' '));
                             o.apply(console, arguments); }; });
window.addEventListener('load', function () {
  var im = document.images, n = 0;
  for (var i = 0; i < im.length; i++) if (im[i].complete && im[i].naturalWidth > 0) n++;
  var p = document.createElement('pre'); p.id = 'kwcheck';
  p.textContent = JSON.stringify({loaded: n, total: im.length, errors: kwErr});
  document.body.appendChild(p); });
</script>
"""
    i = text.index("</head>")
    copy = tmp / "probed.html"
    copy.write_text(text[:i] + probe + text[i:], encoding="utf-8")
    cmd = [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
           "--no-first-run", "--disable-background-networking", "--disable-component-update",
           "--disable-sync", f"--user-data-dir={tmp / 'profile'}", "--enable-logging=stderr",
           "--v=0", "--dump-dom", copy.as_uri()]
    env = dict(os.environ, HOME=str(tmp), XDG_CONFIG_HOME=str(tmp / "config"),
               XDG_CACHE_HOME=str(tmp / "cache"), TMPDIR=str(tmp))
    p = subprocess.run(cmd, capture_output=True, text=True, timeout=60, env=env, cwd=tmp)
    assert p.returncode == 0, p.stderr[-2000:]
    m = re.search(r'<pre id="kwcheck">(.*?)</pre>', p.stdout, re.S)
    assert m, "the probe did not run: " + p.stderr[-2000:]
    got = json.loads(html.unescape(m.group(1)))
    console = [l for l in p.stderr.splitlines() if ":CONSOLE" in l]
    return got["loaded"], got["total"], got["errors"] + console


@pytest.mark.skipif(not CHROMIUM, reason="chromium is not installed (scripts/deps.sh test installs it)")
def test_demo_page_in_chromium(demo, tmp_path):
    loaded, total, messages = chromium_check(demo / "a" / "report.html", tmp_path)
    assert messages == []
    assert total == len(list((demo / "a").glob("*.png"))) and loaded == total


@pytest.mark.skipif(not CHROMIUM, reason="chromium is not installed (scripts/deps.sh test installs it)")
def test_sweep_page_in_chromium(sweep, tmp_path):
    loaded, total, messages = chromium_check(sweep / "report.html", tmp_path)
    assert messages == [] and total == 9 and loaded == total


@pytest.mark.skipif(not CHROMIUM, reason="chromium is not installed (scripts/deps.sh test installs it)")
def test_chromium_probe_sees_faults(tmp_path):
    """The probe itself: a broken picture, an external one (refused by the
    page's policy) and a console error are all reported."""
    page = tmp_path / "bad.html"
    good = base64.b64encode(tiny_png()).decode()
    page.write_text(
        "<!DOCTYPE html><html><head><meta http-equiv=\"Content-Security-Policy\" "
        "content=\"default-src 'none'; img-src data:\"></head><body>"
        f"<img alt=a src=\"data:image/png;base64,{good}\">"
        "<img alt=b src=\"data:image/png;base64,AAAA\">"
        "<img alt=c src=\"https://example.invalid/x.png\"></body></html>")
    loaded, total, messages = chromium_check(page, tmp_path)
    assert (loaded, total) == (1, 3)
    assert any("policy: img-src" in m for m in messages)
    assert sum(m.startswith("error: IMG") for m in messages) >= 1
