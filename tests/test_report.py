"""The HTML report: self-contained, and read back in a real (headless) browser."""

import base64
import io
import re
import shutil
import subprocess

import meshio
import numpy as np
import pytest
from PIL import Image

import framebuckle as fb
from framebuckle.pictures import plots, report, reportnumbers

import picture_models as pm

BROWSERS = ("chromium", "chromium-browser", "google-chrome", "google-chrome-stable")
FLAGS = ("--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--hide-scrollbars")


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    d = tmp_path_factory.mktemp("report")
    meshio.write(d / "frame.vtu", pm.portal_3d())
    from framebuckle.cli import main
    assert main(["report", str(d / "frame.vtu"), "--out", str(d / "out"), "--modes", "3"]) == 0
    res = fb.solve(pm.portal_3d(), modes=3)
    return d / "out" / "frame.report.html", res


def test_report_is_self_contained(built):
    path, res = built
    text = path.read_text(encoding="utf-8")
    assert not re.search(r"(src|href)\s*=\s*\"(https?:|//|file:)", text)
    assert "<script" not in text and "<link" not in text and "@import" not in text
    imgs = re.findall(r'<img alt="[^"]*" src="data:image/png;base64,([^"]+)"', text)
    assert len(imgs) == 2 + 2            # first mode of both cases, two plots
    assert text.count("<img") == len(imgs)
    for b in imgs:
        im = Image.open(io.BytesIO(base64.b64decode(b)))
        assert im.format == "PNG" and min(im.size) > 200
    for caution in fb.CAUTIONS:
        assert text.count(caution) == 2                     # near the top and at the end
    assert "@media print" in text and "size: A4" in text


def test_load_factor_table_and_governing_members(built):
    path, res = built
    text = path.read_text(encoding="utf-8")
    table = text[text.index('<table class="load-factors">'):]
    table = table[: table.index("</table>")]
    for c in res.cases:
        assert f"<td>{c.name}</td><td class=\"num\">{c.alpha_cr:.4g}</td>" in table
    # the verdict band follows EN 1993-1-1:2005, 5.2.1(3) (>= 10 elastic first-order) and
    # 5.2.2(5)-(6) (3 to 10: amplify sway effects by 1/(1 - 1/alpha_cr)), evaluated here directly
    assert 3 <= res.case("gravity").alpha_cr < 10 and 10 <= res.case("wind").alpha_cr < 15
    assert "3 to 10: first-order with sway amplification" in table
    assert "10 to 15: first-order elastic analysis allowed" in table


def test_energy_shares_sum_to_one_and_find_the_columns():
    res = fb.solve(pm.portal_3d(), modes=1)
    for c in res.cases:
        share = reportnumbers.energy_shares(res, c.name)
        # element strain energies u_e^T K_e u_e / 2 are >= 0 and add up to the total (common practice)
        assert share.shape == (9,) and abs(share.sum() - 1) < 1e-12 and (share >= -1e-15).all()
    # in this model the two most compressed columns (cells 1 and 2) bend most in the first mode
    gov = np.argsort(-reportnumbers.energy_shares(res, "gravity"))[:2]
    assert set(gov.tolist()) == {1, 2}


def test_plots_are_pictures():
    fig = plots.alpha_plot(["a", "b", "c"], [2.0, 12.0, None], ["", "", "no compression"])
    im = Image.open(io.BytesIO(plots.png_bytes(fig)))
    a = np.asarray(im.convert("RGB")).astype(int)
    assert a.std() > 10
    # the three band colours of the two bars and the legend are drawn (Okabe-Ito palette)
    for hexc in (plots.BAND_COLOURS[0], plots.BAND_COLOURS[2]):
        rgb = np.array([int(hexc[i:i + 2], 16) for i in (1, 3, 5)])
        assert (np.abs(a - rgb).max(axis=-1) < 8).sum() > 50


def _browser():
    for b in BROWSERS:
        p = shutil.which(b)
        if p:
            return p
    pytest.skip("no Chromium found (Debian package 'chromium'; .ci/run installs it with apt-get): "
                "the report cannot be opened in a browser here")


def _run(browser, args, tmp_path, name):
    profile = tmp_path / f"profile-{name}"
    r = subprocess.run([browser, *FLAGS, f"--user-data-dir={profile}", *args], capture_output=True,
                       text=True, timeout=120)
    return r


def test_report_opens_in_headless_chromium(built, tmp_path):
    browser = _browser()
    path, res = built
    shot = tmp_path / "shot.png"
    r = _run(browser, [f"--screenshot={shot}", "--window-size=1200,1600", path.as_uri()], tmp_path, "shot")
    assert shot.is_file(), r.stderr[-2000:]
    a = np.asarray(Image.open(shot).convert("RGB")).astype(int)
    assert a.shape[:2] == (1600, 1200)
    ink = (np.abs(a - 255).max(axis=-1) > 30).mean()
    assert 0.01 < ink < 0.8 and a.std() > 10
    # the rendered text of the load-factor table, as the browser lays it out (innerText
    # leaves out anything not rendered); a copy of the report gets a one-line script
    probe = tmp_path / "probe.html"
    probe.write_text(path.read_text(encoding="utf-8").replace(
        "</body>", "<script>const t = document.querySelector('table.load-factors');"
                   "document.body.setAttribute('data-table', t.innerText.replace(/\\s+/g, ' '));"
                   "document.body.setAttribute('data-height', t.getBoundingClientRect().height);"
                   "</script></body>"), encoding="utf-8")
    r = _run(browser, ["--dump-dom", probe.as_uri()], tmp_path, "dom")
    m = re.search(r'data-table="([^"]*)"', r.stdout)
    assert m, r.stderr[-2000:]
    shown = m.group(1)
    assert float(re.search(r'data-height="([0-9.]+)"', r.stdout).group(1)) > 40
    assert "case alpha_cr further load factors" in shown
    for c in res.cases:
        assert f"{c.name} {c.alpha_cr:.4g} " in shown


def test_report_prints_to_a4(built, tmp_path):
    browser = _browser()
    path, _ = built
    pdf = tmp_path / "report.pdf"
    r = _run(browser, [f"--print-to-pdf={pdf}", "--no-pdf-header-footer", path.as_uri()], tmp_path, "pdf")
    assert pdf.is_file(), r.stderr[-2000:]
    data = pdf.read_bytes()
    # ISO 216: A4 is 210 mm x 297 mm = 595.3 pt x 841.9 pt
    boxes = re.findall(rb"/MediaBox\s*\[\s*0\s+0\s+([0-9.]+)\s+([0-9.]+)\s*\]", data)
    assert boxes, "no page in the PDF"
    for w, h in boxes:
        assert abs(float(w) - 595.3) < 1.5 and abs(float(h) - 841.9) < 1.5
    assert len(boxes) >= 2                         # the report runs over more than one page
