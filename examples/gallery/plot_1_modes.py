"""
Load factors and mode pictures
==============================

Solve the footbridge sample (a 24 m half-through Pratt truss whose top chords are held sideways
only by U-frames) with the Python API, then draw its two lowest modes with ``framebuckle
render``, off-screen.
"""

import os
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

import matplotlib.pyplot as plt
from PIL import Image

import framebuckle

HERE = Path(__file__).resolve().parent if "__file__" in globals() else Path.cwd()
ROOT = HERE.parents[1]
SAMPLE = ROOT / "sample_meshes" / "footbridge.vtu"
WINDOW = os.environ.get("FRAMEBUCKLE_GALLERY_WINDOW", "1000x750")   # picture size in pixels

# %%
# Solve in Python
# ---------------
# :func:`framebuckle.solve` reads the mesh with its axial forces (cell fields
# ``axial_force.crowd_full`` and ``axial_force.crowd_half``), solves every load case and returns
# a :class:`framebuckle.Result`; nothing is written.

res = framebuckle.solve(SAMPLE, modes=3)
for case in res.cases:
    print(f"{case.name:12s} alpha_cr = {case.alpha_cr:6.3f}   load factors:",
          ", ".join(f"{x:.3f}" for x in case.load_factors))
print()
print("\n".join(framebuckle.CAUTIONS))

# %%
# Draw the modes
# --------------
# ``framebuckle solve`` writes the modes as mesh fields (``footbridge.modes_fine.vtu``);
# ``framebuckle render`` draws one picture per case with four views of the buckled shape,
# coloured by displacement, without solving again.

out = Path(tempfile.mkdtemp(prefix="framebuckle_gallery_"))
cli = [sys.executable, "-m", "framebuckle"]
subprocess.run(cli + ["solve", str(SAMPLE), "--modes", "3", "--out", str(out)], check=True,
               stdout=subprocess.DEVNULL)
pictures = []
for mode in (1, 2):
    subprocess.run(cli + ["render", str(out / "footbridge.modes_fine.vtu"), "--case", "crowd_full",
                          "--mode", str(mode), "--window", WINDOW, "--out", str(out), "--force"],
                   check=True, stdout=subprocess.DEVNULL)
    pictures.append(out / f"footbridge.crowd_full.mode{mode}.png")

for path in pictures:
    img = Image.open(path)
    fig, ax = plt.subplots(figsize=(img.width / 100, img.height / 100), dpi=100)
    ax.imshow(img)
    ax.set_axis_off()
    fig.subplots_adjust(0, 0, 1, 1)

shutil.rmtree(out)

# %%
# Mode 1 (alpha_cr) is the top chords buckling sideways between the U-frames; the next load
# factors lie within 2 % of it, the same chords in other wave forms. What these modes mean for
# the design (effective lengths, mode types, code verdicts) is the engineering check's job:
# :doc:`plot_2_check`.
