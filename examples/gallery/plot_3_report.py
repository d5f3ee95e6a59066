"""
The HTML report for a checker
=============================

``framebuckle report`` solves a model and writes one self-contained HTML file (pictures and plots
embedded, no script, no network) with the job summary, the cautions, the load factors with the
verdict band of EN 1993-1-1:2005 5.2.1(3) and 5.2.2, the governing members, the first-mode picture
of every case and plots. Here: the footbridge sample.
"""

import base64
import os
import re
import subprocess
import sys
import tempfile
from io import BytesIO
from pathlib import Path

import matplotlib.pyplot as plt
from PIL import Image

HERE = Path(__file__).resolve().parent if "__file__" in globals() else Path.cwd()
ROOT = HERE.parents[1]
SAMPLE = ROOT / "sample_meshes" / "footbridge.vtu"
# the documentation build copies this folder into the site (reports/); alone, a temporary folder
OUT = Path(os.environ.get("FRAMEBUCKLE_GALLERY_REPORTS") or tempfile.mkdtemp(prefix="framebuckle_report_"))

run = subprocess.run([sys.executable, "-m", "framebuckle", "report", str(SAMPLE), "--out", str(OUT),
                      "--force"], capture_output=True, text=True)
print(run.stdout)
assert run.returncode == 0, run.stderr
report = OUT / "footbridge.report.html"
html = report.read_text(encoding="utf-8")
print(f"{report.name}: {len(html) / 1e6:.2f} MB, one file")

# %%
# The report's sections
# ---------------------

for section in re.findall(r'<h2 id="[^"]*">(.*?)</h2>', html):
    print("-", re.sub(r"<[^>]+>", "", section))

# %%
# Its first picture (first mode of the first case), taken from the file itself
# ----------------------------------------------------------------------------

png = re.search(r'src="data:image/png;base64,([^"]+)"', html).group(1)
img = Image.open(BytesIO(base64.b64decode(png)))
fig, ax = plt.subplots(figsize=(img.width / 100, img.height / 100), dpi=100)
ax.imshow(img)
ax.set_axis_off()
fig.subplots_adjust(0, 0, 1, 1)

# %%
# The whole report as it was written in this build:
# `footbridge.report.html <../reports/footbridge.report.html>`_
#
# .. raw:: html
#
#    <iframe src="../reports/footbridge.report.html" style="width: 100%; height: 700px;
#     border: 1px solid #ccc;" title="framebuckle report of the footbridge sample"></iframe>
