"""Many combinations of few basic cases: time per additional combination against the first.

The building of :mod:`building` (invented scenario) with six invented basic cases as axial
force fields: G (floor load), Q1 / Q2 (imposed load on either half of the plan), S (roof
only), W_x / W_y (overturning: columns on one side in compression, the other in tension,
growing downwards).  64 combinations with factors drawn (fixed seed) in G [1.0, 1.35],
Q [0, 1.5], S [0, 0.75], W [-1.5, 1.5].  Every check of the solve stays on (residuals,
K-orthogonality, Sturm count).

Usage: ``python benchmarks/combinations.py DOFS [N_COMBINATIONS]`` (run by hand; prints JSON).
"""

from __future__ import annotations

import json
import os
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "plugin"))
sys.path.insert(0, str(Path(__file__).resolve().parent))

import building  # noqa: E402


def model(dofs: float):
    nx, ny, nz = building.plan(dofs)
    m = building.building(nx, ny, nz)
    g = m.cell_data.pop("axial_force.gravity")[0]
    m.cell_data.pop("axial_force.gravity_half")
    ncol = (nx + 1) * (ny + 1) * nz
    ix, iy, iz = np.meshgrid(np.arange(nx + 1), np.arange(ny + 1), np.arange(nz), indexing="ij")
    ix, iy, iz = ix.ravel(), iy.ravel(), iz.ravel()
    gc = g[:ncol]
    z = np.zeros(len(g) - ncol)
    half = ix <= nx // 2
    roof = -gc / (nz - iz)                       # one floor's share: the roof load alone
    over = (nz - iz) * 0.02 * np.abs(gc).max() / nz
    cases = {"G": gc, "Q1": 0.6 * gc * half, "Q2": 0.6 * gc * ~half, "S": -0.3 * roof,
             "W_x": over * (2 * ix / nx - 1), "W_y": over * (2 * iy / ny - 1)}
    for k, v in cases.items():
        m.cell_data[f"axial_force.{k}"] = [np.r_[v, z]]
    return m, list(cases), (nx, ny, nz)


def combinations(names, n, seed=2026):
    rng = np.random.default_rng(seed)
    lo = {"G": 1.0, "Q1": 0.0, "Q2": 0.0, "S": 0.0, "W_x": -1.5, "W_y": -1.5}
    hi = {"G": 1.35, "Q1": 1.5, "Q2": 1.5, "S": 0.75, "W_x": 1.5, "W_y": 1.5}
    return {f"C{i:03d}": {k: round(float(rng.uniform(lo[k], hi[k])), 3) for k in names} for i in range(n)}


def main(argv):
    import framebuckle as fb
    dofs = float(argv[0]) if argv else 1e5
    n = int(argv[1]) if len(argv) > 1 else 64
    m, names, plan = model(dofs)
    combos = combinations(names, n)
    study = {"combinations": combos, "analysis": {"cases": list(combos), "mesh_check": False}}
    t0 = time.perf_counter()
    r = fb.solve(m, study, modes=4)
    total = time.perf_counter() - t0
    tc = r.timings["cases"]
    out = {"plan": plan, "free_dofs": int(len(r.constraints.free)), "combinations": n,
           "basic_kg_assembly_in_first": True, "first": tc[0], "additional_mean": float(np.mean(tc[1:])),
           "additional_median": float(np.median(tc[1:])), "ratio": float(np.mean(tc[1:]) / tc[0]),
           "factorization": r.timings.get("factorization"), "assembly": r.timings.get("assembly"),
           "total": total, "methods": sorted({c.method for c in r.cases}),
           "sturm_checked": sum(1 for c in r.cases if c.checks.get("sturm_count") is not None
                                or "sturm" in json.dumps(c.checks, default=str)),
           "lowest_alpha": min(c.alpha_cr for c in r.cases if c.alpha_cr),
           "load": os.getloadavg(), "backend": r.timings.get("backend")}
    st = r.timings.get("case_stages") or []
    if st:                                  # where the time goes: first case, mean of the others
        out["stages_first"] = st[0]
        out["stages_additional_mean"] = {k: float(np.mean([s[k] for s in st[1:]])) for k in st[0]}
    print(json.dumps(out, indent=1))


if __name__ == "__main__":
    main(sys.argv[1:])
