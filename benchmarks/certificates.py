"""What the certificates of one case cost, per backend (run by hand, not in CI).

For one building model and its first load case (the pipeline's scaled pencil) it times:

* K's factorization (mtype 2 with MKL, SuperLU with scipy) and a block solve of 11 vectors;
* the eigensolution as the tool runs it (shift: rough bound, K + sigma Kg factored and proved
  positive definite, block Krylov-Schur on nu = 1/(lambda - sigma)), and without the shift
  (K's factorization alone), with the number of restarts and block solves;
* the Sturm count at 1.0001 x the 10th load factor (an LDL^T: mtype -2 with MKL);
* an indefinite factorization (mtype -2) of K + sigma Kg at that sigma and a block solve with it:
  the price of a single factorization serving as both count and shift-and-invert operator.

Usage: FRAMEBUCKLE_SOLVER=mkl python benchmarks/certificates.py FILE [modes]
"""

import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "plugin"))

import numpy as np  # noqa: E402

import importlib  # noqa: E402

from framebuckle.pipeline import api  # noqa: E402
from framebuckle.solver import pardiso, verify  # noqa: E402

S = importlib.import_module("framebuckle.solver.solve")
from framebuckle.mechanics.assemble import Assembler  # noqa: E402
from framebuckle.io.read import read_input  # noqa: E402
from framebuckle.model.refine import subdivide  # noqa: E402
from framebuckle.io.study import Study  # noqa: E402


def main(path, k=10):
    im = read_input(path, Study())
    ref = subdivide(im.frame, 8)
    asm = Assembler.build(ref.frame)
    K = asm.stiffness()
    cons = S.find_constraints(ref.frame, K, "auto")
    out = {"backend": pardiso.backend()}
    t = time.perf_counter()
    f, Kff = S.factorize(K, cons, ref.frame, im.frame.n_nodes, path, scale=True)
    out["factor_K"] = time.perf_counter() - t
    B = np.random.default_rng(0).standard_normal((Kff.shape[0], k + 1))
    t = time.perf_counter()
    f.solve(B)
    out["solve_K_11"] = time.perf_counter() - t
    geo = api._CaseGeometric(asm, ref, True)
    G = S.scale_matrix(geo(im.cases[0])[cons.free][:, cons.free], f.scale)
    for shift in (True, False):
        S.BLOCK_SHIFT = shift
        t = time.perf_counter()
        er = S.buckling_modes(f, Kff, G, k, method="block")
        out[f"eigen_{'shift' if shift else 'noshift'}"] = time.perf_counter() - t
        out[f"lam_{'shift' if shift else 'noshift'}"] = er.load_factors.tolist()
    sigma = er.load_factors[-1] * (1 + verify.STURM_GAP)
    t = time.perf_counter()
    n, how = verify.negative_count(Kff + sigma * G)
    out["sturm_count"] = time.perf_counter() - t
    out["sturm"] = (n, how)
    if pardiso.active():
        t = time.perf_counter()
        pf = pardiso.PardisoFactor(Kff + sigma * G, -2)
        out["factor_indef"] = time.perf_counter() - t
        out["inertia_indef"] = pf.inertia()
        t = time.perf_counter()
        pf.solve(B)
        out["solve_indef_11"] = time.perf_counter() - t
        t = time.perf_counter()
        pf2 = pardiso.PardisoFactor(Kff + 0.9 * er.load_factors[0] * G, 2)
        out["factor_spd_shift"] = time.perf_counter() - t
        pf.close()
        pf2.close()
    for key, v in out.items():
        print(f"{key}: {v:.3f}" if isinstance(v, float) else f"{key}: {v}")


if __name__ == "__main__":
    main(sys.argv[1], *(int(a) for a in sys.argv[2:3]))
