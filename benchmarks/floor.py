"""The floor: the least any tool must do for one model, as one process.

Imports numpy, scipy and meshio, reads the file with meshio, builds the
sub-divided model, assembles K with vectorised numpy (the package's own
vectorised element and assembly code) and factors the free-free K once with a
direct solver ("splu": scipy SuperLU as the tool uses it; "mkl": MKL PARDISO
through the package's own binding framebuckle.solver.pardiso, Cholesky of the upper
triangle, METIS, as the tool's "mkl" backend uses it; "pardiso": MKL PARDISO through
pypardiso, if installed).  No eigensolution, no output.

Usage: python benchmarks/floor.py FILE [splu|mkl|pardiso]
"""

import sys
import time

t0 = time.perf_counter()
import meshio  # noqa: E402
import numpy as np  # noqa: E402
import scipy.sparse as sp  # noqa: E402
import scipy.sparse.linalg as spla  # noqa: E402

from framebuckle.mechanics.assemble import Assembler  # noqa: E402
from framebuckle.model.model import make_frame  # noqa: E402
from framebuckle.model.refine import subdivide  # noqa: E402


def main(path, solver="splu"):
    t = {}
    s = time.perf_counter()
    m = meshio.read(path)
    cd = {k: np.asarray(v[0]) for k, v in m.cell_data.items()}
    el = m.cells[0].data
    fr = make_frame(m.points, el, cd["E"], cd["G"], cd["A"], cd["Iy"], cd["Iz"], cd["J"],
                    orientation=cd["orientation"], bar=cd["bar"].astype(bool),
                    restraint=m.point_data["restraint"].astype(bool))
    t["read"] = time.perf_counter() - s
    s = time.perf_counter()
    fine = subdivide(fr, 8).frame
    K = Assembler.build(fine).stiffness()
    free = np.flatnonzero(~fine.restraint.reshape(-1))
    Kff = K[free][:, free]
    t["assembly"] = time.perf_counter() - s
    s = time.perf_counter()
    if solver == "mkl":
        from framebuckle.solver.pardiso import PardisoFactor
        PardisoFactor(Kff, 2)
    elif solver == "pardiso":
        import pypardiso
        ps = pypardiso.PyPardisoSolver(mtype=2)
        ps.factorize(sp.triu(Kff, format="csr"))
    else:
        spla.splu(sp.csc_matrix(Kff), permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                  options={"SymmetricMode": True})
    t["factorization"] = time.perf_counter() - s
    t["process"] = time.perf_counter() - t0
    print("floor", solver, Kff.shape[0], " ".join(f"{k}={v:.3f}" for k, v in t.items()))


if __name__ == "__main__":
    main(sys.argv[1], *(sys.argv[2:3]))
