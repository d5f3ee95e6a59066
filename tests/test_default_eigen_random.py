"""The default eigensolution (ARPACK first, block method on a possible repeat or a skipped value)
on seeded random space frames, against the dense generalized symmetric eigensolver
scipy.linalg.eigh (LAPACK dsygvd; Anderson et al. 1999, LAPACK Users' Guide, 3rd ed.,
sec. 2.3.5.2) on the same matrices.

Half of the frames are doubly symmetric with equal columns (exact repeats of load factors: the
model's symmetry), half have scattered sections and loads with some members in tension; every
requested load factor must agree to 1e-8 relative, the cluster flag must agree with the
reference, and the Sturm count of the check must equal the number reported.
"""

import numpy as np
import pytest

from framebuckle.model.model import make_frame
from framebuckle.model.refine import subdivide
from framebuckle.solver.verify import solve_checked
from test_block_eigen import dense_load_factors, grid_layout, matrices

E, G = 210e9, 81e9


def random_frame(seed: int):
    rng = np.random.default_rng(seed)
    symmetric = seed % 2 == 0
    nb, ns = int(rng.integers(1, 4)), int(rng.integers(1, 4))
    pts, el, nc, ori, rest = grid_layout(nb, ns)
    spread = 0.0 if symmetric else 0.3       # sections, areas and torsion constants scattered
    Ic = 6e-5 * (1 + spread * rng.random(nc))
    I = np.r_[Ic, np.full(len(el) - nc, 2e-4)]
    Iz = np.r_[Ic if symmetric else Ic * (0.5 + rng.random(nc)), np.full(len(el) - nc, 1e-5)]
    A = 1e-2 * (1 + spread * rng.random(len(el)))
    # a small J makes St. Venant torsional buckling govern, whose load factor does not depend on
    # the wave form (N_T = G J A / I_p: Timoshenko & Gere 1961, sec. 5.3): a repeat as many times as
    # a member has interior twist DOFs; the scattered frames get a stiffer J so that flexural
    # modes with distinct load factors govern
    J = 1e-6 if symmetric else 1e-4 * (1 + spread * rng.random(len(el)))
    fr = make_frame(pts, el, E, G, A, I, Iz, J, orientation=ori, restraint=rest)
    floors = ns - (np.arange(nc) % ns)
    axial = np.r_[-1e5 * floors, np.zeros(len(el) - nc)]
    if not symmetric:                   # scattered loads, some beams in tension
        axial[:nc] *= 0.7 + 0.6 * rng.random(nc)
        axial[nc:] = np.where(rng.random(len(el) - nc) < 0.3, 2e4, 0.0)
    return subdivide(fr, int(rng.integers(3, 6))), axial


@pytest.mark.parametrize("seed", range(8))
def test_default_eigensolution_equals_dense(seed):
    f, K, Gm = matrices(*random_frame(seed))
    assert K.shape[0] > 240                         # the iterative path, not the dense one
    k = 6
    ref = dense_load_factors(K, Gm, k + 1)
    er, checks = solve_checked(f, K, Gm, k, source="random", case=str(seed))
    np.testing.assert_allclose(er.load_factors, ref[:k], rtol=1e-8)
    assert er.cluster_continues == bool(abs(ref[k] - ref[k - 1]) <= 1e-6 * ref[k - 1])
    assert checks["sturm_count"] >= k == checks["sturm_expected"]
    assert er.method in ("arpack", "block")


def test_the_random_frames_cover_both_paths_and_are_not_dense():
    methods, sizes = set(), []
    for seed in range(8):
        f, K, Gm = matrices(*random_frame(seed))
        sizes.append(K.shape[0])
        methods.add(solve_checked(f, K, Gm, 6, source="random", case=str(seed))[0].method)
    assert min(sizes) > 240
    assert methods == {"arpack", "block"}
