"""Cost of the result checks (framebuckle.solver.verify) against the whole run, by hand:

    python benchmarks/verify_overhead.py [n_bays]

Builds an invented multi-storey frame of n_bays x n_bays x n_bays bays (3 m storeys, 6 m bays,
fixed bases, gravity-like column forces), solves it, and reports the time of the whole run and of
the verification (residual, K-orthogonality, Sturm count) it includes.
"""

import sys
import time

import meshio
import numpy as np

import framebuckle as fb
from framebuckle.solver import verify


def building(nb: int) -> meshio.Mesh:
    xs = np.arange(nb + 1) * 6.0
    zs = np.arange(nb + 1) * 3.0
    X, Y, Z = np.meshgrid(xs, xs, zs, indexing="ij")
    pts = np.column_stack([X.ravel(), Y.ravel(), Z.ravel()])
    idx = np.arange(len(pts)).reshape(nb + 1, nb + 1, nb + 1)
    cols = np.column_stack([idx[:, :, :-1].ravel(), idx[:, :, 1:].ravel()])
    bx = np.column_stack([idx[:-1, :, 1:].ravel(), idx[1:, :, 1:].ravel()])
    by = np.column_stack([idx[:, :-1, 1:].ravel(), idx[:, 1:, 1:].ravel()])
    cells = np.vstack([cols, bx, by])
    storey = pts[cols[:, 1], 2] / 3.0
    axial = np.r_[-1e5 * (nb + 1 - storey), np.full(len(bx) + len(by), -1e3)]
    ne = len(cells)
    r = np.zeros((len(pts), 6))
    r[pts[:, 2] == 0] = 1
    one = lambda v: [np.full(ne, v)]
    return meshio.Mesh(pts, [("line", cells)], point_data={"restraint": r},
                       cell_data={"axial_force": [axial], "E": one(2.1e11), "G": one(8.1e10),
                                  "A": one(5.4e-3), "Iy": one(8.4e-5), "Iz": one(6.0e-6),
                                  "J": one(2e-7), "Iw": one(7e-8)})


def main(nb=4):
    mesh = building(nb)
    spent = {"check": 0.0}
    inner = verify.check_case

    def timed(*a, **k):
        t = time.perf_counter()
        try:
            return inner(*a, **k)
        finally:
            spent["check"] += time.perf_counter() - t

    verify.check_case = timed
    t0 = time.perf_counter()
    res = fb.solve(mesh, modes=6)
    total = time.perf_counter() - t0
    c = res.summary()["cases"][0]
    print(f"{nb}^3 bays: {res.summary()['model']['free_dofs']} free DOFs, alpha_cr {c['load_factors'][0]:.4g}, "
          f"sturm {c['checks']['sturm_count']}/{c['checks']['sturm_expected']} "
          f"({c['checks']['sturm_method']}); run {total:.2f} s, checks {spent['check']:.2f} s")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 4)
