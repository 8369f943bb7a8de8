"""Reports (eosfill.io.report via `eosfill run --report`): end to end on the demo scenarios.

Plumbing and presentation checks: the physics in the reports is checked
against outside sources in test_vessel.py and test_transient.py.  Expected
strings come from the scenario files themselves (what the user typed) or
from the run's own JSON (to see that the report shows the same numbers).
"""
from __future__ import annotations

import html
import json
import re
import shutil
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from eosfill.model import cubic

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - Python 3.10
    import tomli as tomllib

ROOT = Path(__file__).resolve().parent.parent
DEMOS = ROOT / "data" / "scenarios"
CAUTION = "local codes, the vessel's approval documents and licensed practice govern"

# demo -> names of the plots expected in its report (the 30-minute blowdown demo is left out: it
# takes minutes; the 70 MPa demo covers the time-resolved plots)
EXPECTED = {
    "cylinder_fill_residual": ["path"],
    "blend_fill_h2_ch4": ["path"],
    "liquefied_co2_fill": ["path"],
    "ngv_cascade_3bank": ["path", "cascade"],
    "vent_blowdown_endstate": ["path"],
    "h2_70MPa_precooled_fill": ["pressure", "temperature", "mass", "path"],
}


def run(*args, **kw):
    return subprocess.run([sys.executable, "-m", "eosfill", *args], capture_output=True, text=True,
                          timeout=300, **kw)


@pytest.fixture(scope="module", params=sorted(EXPECTED))
def demo_report(request, tmp_path_factory):
    name = request.param
    out = tmp_path_factory.mktemp(name)
    r = run("run", str(DEMOS / f"{name}.toml"), "--report", str(out / "r.html"), "--json", str(out / "r.json"))
    assert r.returncode == 0, r.stderr
    return name, out


def test_report_is_self_contained_with_caution_inputs_and_plots(demo_report):
    name, out = demo_report
    text = (out / "r.html").read_text(encoding="utf-8")
    assert text.startswith("<!DOCTYPE html>")
    # self-contained: no outside link, script, style sheet or image
    assert not re.search(r"""(src|href)\s*=\s*["']?\s*(https?:|//|file:)""", text, re.I)
    assert "<link" not in text and "<script" not in text and "@import" not in text
    srcs = re.findall(r'<img[^>]*\ssrc="([^"]*)"', text)
    assert srcs and all(s.startswith("data:image/png;base64,") for s in srcs)
    # one embedded image per expected plot
    ids = re.findall(r'<figure id="plot-([a-z]+)"', text)
    assert sorted(ids) == sorted(EXPECTED[name])
    assert len(srcs) == len(EXPECTED[name])
    # the caution, visibly in a box, at the top and at the end
    assert html.unescape(text).lower().count(CAUTION) >= 2
    assert re.search(r'<div class="box caution"[^>]*>.*?' + re.escape(html.escape(CAUTION)), text, re.S | re.I)
    # inputs echoed with the units the user wrote (vessel volume as in the TOML file)
    spec = tomllib.loads((DEMOS / f"{name}.toml").read_text())
    assert f"<td>vessel.volume</td><td>{spec['vessel']['volume']}</td>" in text
    # model citation (eosfill.model.cubic) and reference state
    model = spec["fluid"].get("model", "PR")
    assert html.escape(cubic.MODELS[model].citation) in text
    assert "298.15 K" in text and "101 325 Pa" in text
    # the model's parts and its measured error for the gas in hand (or that it was not measured)
    assert f"model {model}:" in html.unescape(text)
    assert re.search(r"measured against reference equations|accuracy not measured", html.unescape(text))


def test_report_shows_the_closure_and_markdown_twin_matches(demo_report):
    name, out = demo_report
    text = (out / "r.html").read_text(encoding="utf-8")
    md = (out / "r.md").read_text(encoding="utf-8")
    res = json.loads((out / "r.json").read_text())
    res = res.get("result", res)
    closure = f"{res['energy_closure']:.3e}"
    for doc in (text, md):
        assert closure in doc and f"{res['mass_closure']:.3e}" in doc
        assert "Energy and mass balance" in doc
        assert CAUTION in html.unescape(doc).lower()
    # key numbers appear in both files alike: every table cell of the HTML is in the Markdown
    cells = {html.unescape(c) for c in re.findall(r"<td>([^<]*)</td>", text)}
    missing = [c for c in cells if c and c.replace("|", "\\|") not in md]
    assert not missing
    # the Markdown's plots are PNG files beside it
    pngs = re.findall(r"!\[[^\]]*\]\(([^)]+)\)", md)
    assert len(pngs) == len(EXPECTED[name])
    for p in pngs:
        assert (out / p).read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def _scenario(tmp_path, body):
    p = tmp_path / "s.toml"
    p.write_text(textwrap.dedent(body))
    return p


PASSING_LIMIT = """
    kind = "fill"
    title = "limit test"
    [fluid]
    composition = "nitrogen"
    [vessel]
    volume = "50 L"
    [initial]
    temperature = "15 degC"
    pressure = "10 bar"
    [supply]
    temperature = "15 degC"
    pressure = "200 bar"
    [stop]
    target_pressure = "150 bar"
    [limits]
    max_gas_temperature = "30 degC"
"""


def test_limit_passed_is_shown_in_a_caution_box(tmp_path):
    sc = _scenario(tmp_path, PASSING_LIMIT)
    r = run("run", str(sc), "--report", str(tmp_path / "r.html"))
    assert r.returncode == 0, r.stderr
    text = (tmp_path / "r.html").read_text(encoding="utf-8")
    box = re.search(r'<div class="box limits"[^>]*>(.*?)</div>', text, re.S)
    assert box is not None and "Limit exceeded: gas temperature" in box.group(1)
    assert "max_gas_temperature" in box.group(1)
    assert "max_gas_temperature" in (tmp_path / "r.md").read_text(encoding="utf-8")
    assert '<div class="box neutral"' not in text and "No limit reached" not in text


def test_no_limit_reached_is_a_neutral_box(tmp_path):
    sc = _scenario(tmp_path, PASSING_LIMIT.replace('"30 degC"', '"150 degC"'))
    r = run("run", str(sc), "--report", str(tmp_path / "r.html"))
    assert r.returncode == 0, r.stderr
    text = (tmp_path / "r.html").read_text(encoding="utf-8")
    box = re.search(r'<div class="box neutral"[^>]*>(.*?)</div>', text, re.S)
    assert box is not None and "No limit reached" in box.group(1) and "&#9888;" not in box.group(1)
    assert '<div class="box limits"' not in text


def test_bad_scenario_writes_no_report(tmp_path):
    sc = _scenario(tmp_path, PASSING_LIMIT.replace('"50 L"', '"50 kg"'))
    r = run("run", str(sc), "--report", str(tmp_path / "r.html"), "--json", str(tmp_path / "r.json"))
    assert r.returncode == 2
    assert sorted(p.name for p in tmp_path.iterdir()) == ["s.toml"]


def test_missing_matplotlib_is_a_clear_error_and_writes_nothing(tmp_path):
    sc = _scenario(tmp_path, PASSING_LIMIT)
    code = ("import sys; sys.modules['matplotlib'] = None; from eosfill.io.cli import main; "
            f"sys.exit(main(['run', {str(sc)!r}, '--report', {str(tmp_path / 'r.html')!r}, "
            f"'--json', {str(tmp_path / 'r.json')!r}]))")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert r.returncode == 2
    assert "matplotlib" in r.stderr and "pip install" in r.stderr
    assert sorted(p.name for p in tmp_path.iterdir()) == ["s.toml"]


def test_import_eosfill_does_not_load_matplotlib():
    code = "import sys, eosfill, eosfill.io.jobs; print('matplotlib' in sys.modules)"
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60)
    assert r.stdout.strip() == "False", r.stderr


def _browser():
    for name in ("chromium", "chromium-browser", "google-chrome"):
        if shutil.which(name):
            return name
    return None


@pytest.mark.skipif(_browser() is None, reason="no chromium on PATH (CI may not have it)")
def test_report_renders_in_a_browser(tmp_path):
    sys.path.insert(0, str(ROOT / "scripts"))
    try:
        from screenshot_report import screenshot
    finally:
        sys.path.pop(0)
    sc = _scenario(tmp_path, PASSING_LIMIT)
    r = run("run", str(sc), "--report", str(tmp_path / "r.html"))
    assert r.returncode == 0, r.stderr
    png = screenshot(tmp_path / "r.html", tmp_path / "shot.png", height=1400)
    import matplotlib.image as mpimg
    import numpy as np

    img = (mpimg.imread(png)[..., :3] * 255).round().astype(int)
    # the caution box's border colour (#b36b00) and the limits box's (#b00020) are on screen
    for rgb in ((0xB3, 0x6B, 0x00), (0xB0, 0x00, 0x20)):
        assert np.any(np.all(np.abs(img - np.array(rgb)) <= 2, axis=-1)), rgb
    # laptop width: nothing drawn in the right margin (no table or figure overflows the page column)
    from screenshot_report import print_pdf

    laptop = screenshot(tmp_path / "r.html", tmp_path / "laptop.png", width=1366, height=3000)
    img = (mpimg.imread(laptop)[..., :3] * 255).round().astype(int)
    right = img[:, int(0.93 * img.shape[1]):]
    assert np.all(right >= 250), "something overflows into the right margin"
    # A4 print to PDF: pages of 595 x 842 pt (ISO 216 A4, 210 x 297 mm)
    pdf = print_pdf(tmp_path / "r.html", tmp_path / "r.pdf").read_bytes()
    boxes = re.findall(rb"/MediaBox\s*\[\s*0\s+0\s+([\d.]+)\s+([\d.]+)", pdf)
    assert boxes and all(abs(float(w) - 595.3) < 2 and abs(float(h) - 841.9) < 2 for w, h in boxes)
