"""The eigensolution against dense LAPACK, and invariances every correct model has.

References
----------
* Dense reference: ``scipy.linalg.eigh`` (LAPACK) on the same pencil
  ``-Kg phi = mu K phi``, ``lambda = 1/mu`` (general-purpose reference library).
* Invariances of the linear buckling problem ``(K + lambda Kg) phi = 0``
  (Bathe 1996, Finite Element Procedures, sec. 6.8.2 and 10.2.1, from memory;
  common practice): frame-indifference under a rigid motion, ``Kg`` linear in the
  axial forces (so ``lambda`` scales with ``1/s``), ``K`` linear in the moduli, and
  K-orthogonality of eigenvectors of a symmetric-definite pencil.
"""

import meshio
import numpy as np
import pytest
import scipy.linalg as sla
from scipy.spatial.transform import Rotation

import framebuckle as fb
from framebuckle.pipeline.api import DEFAULT_SUBDIVIDE
from framebuckle.mechanics.assemble import Assembler
from framebuckle.io.read import read_input
from framebuckle.model.refine import subdivide
from framebuckle.solver.solve import find_constraints

from refmodels import FIXED, FREE, line_mesh, frame3d


def dense_load_factors(mesh, m=DEFAULT_SUBDIVIDE, k=None, case=0):
    """Lowest positive load factors of the same pencil by scipy.linalg.eigh (dense)."""
    im = read_input(mesh)
    ref = subdivide(im.frame, m)
    asm = Assembler.build(ref.frame)
    K = asm.stiffness()
    cons = find_constraints(ref.frame, K)
    f = cons.free
    Kff = K[f][:, f].toarray()
    Gff = asm.geometric(ref.fine_axial(im.cases[case].axial))[f][:, f].toarray()
    mu = sla.eigh(-Gff, Kff, eigvals_only=True)          # LAPACK, dense
    lam = np.sort(1.0 / mu[mu > 1e-9 * mu.max()])
    return lam if k is None else lam[:k]


def cantilevers(n, cases):
    """``n`` identical, unconnected fixed-base cantilevers (identical members)."""
    pts, cells, r = [], [], []
    for i in range(n):
        pts += [[3.0 * i, 0.0, 0.0], [3.0 * i, 0.0, 4.0]]
        cells.append([2 * i, 2 * i + 1])
        r += [FIXED, FREE]
    return line_mesh(pts, cells, axial=None, restraint=r, cases=cases)


# ------------------------------------------------------------------ sparse = dense


def test_arpack_equals_dense_eigh_on_3d_frame():
    mesh = line_mesh(**frame3d())
    res = fb.solve(mesh, modes=6, method="arpack")
    c = res.cases[0]
    assert c.method == "arpack"
    ref = dense_load_factors(mesh, k=6)
    # scipy.linalg.eigh (LAPACK) on the same pencil
    np.testing.assert_allclose(c.load_factors, ref, rtol=1e-8)


def test_arpack_finds_every_copy_of_repeated_load_factors():
    """Six identical cantilevers: the lowest load factor repeats 12 times (two planes each).

    The first case loads one column only, so its mode (handed on as a start vector)
    lives in that column; the second case loads all six.  Every requested mode must be
    found, exactly as dense LAPACK finds them.
    """
    n = 6
    one = np.zeros(n)
    one[0] = -1000.0
    mesh = cantilevers(n, {"one": one, "all": np.full(n, -2000.0)})
    for sub in (4, 12):
        res = fb.solve(mesh, modes=12, method="arpack", subdivide=sub)
        lam = res.case("all").load_factors
        ref = dense_load_factors(mesh, m=sub, k=12, case=1)
        # scipy.linalg.eigh (LAPACK): twelve equal values
        np.testing.assert_allclose(ref, ref[0], rtol=1e-10)
        np.testing.assert_allclose(lam, ref, rtol=1e-8)
        # asking for fewer than the multiplicity says the cluster continues
        res5 = fb.solve(mesh, modes=5, method="arpack", subdivide=sub)
        assert res5.case("all").cluster_continues
        np.testing.assert_allclose(res5.case("all").load_factors, ref[:5], rtol=1e-8)


def test_arpack_equals_dense_on_symmetric_frame_with_repeated_sway_modes():
    """A square-plan 3D frame: sway in X and in Y are the same mode turned by 90 degrees."""
    n, bay, h = 2, 5.0, 3.0
    idx = lambda i, j, s: (s * (n + 1) + j) * (n + 1) + i
    pts = [[i * bay, j * bay, s * h] for s in range(3) for j in range(n + 1) for i in range(n + 1)]
    cells, axial = [], []
    for s in range(2):
        for j in range(n + 1):
            for i in range(n + 1):
                cells.append([idx(i, j, s), idx(i, j, s + 1)])
                axial.append(-1e5 * (2 - s))
    for s in (1, 2):
        for j in range(n + 1):
            for i in range(n):
                cells += [[idx(i, j, s), idx(i + 1, j, s)], [idx(j, i, s), idx(j, i + 1, s)]]
                axial += [0.0, 0.0]
    r = np.zeros((len(pts), 6))
    r[: (n + 1) ** 2] = 1
    mesh = line_mesh(pts, cells, axial=np.array(axial), restraint=r)
    lam = fb.solve(mesh, modes=6, method="arpack").cases[0].load_factors
    ref = dense_load_factors(mesh, k=6)                 # scipy.linalg.eigh (LAPACK)
    assert abs(ref[1] / ref[0] - 1) < 1e-10             # the pair repeats
    np.testing.assert_allclose(lam, ref, rtol=1e-8)


# ------------------------------------------------------------------ invariances


def _rigid_motion(kw, seed=11):
    R = Rotation.random(random_state=seed).as_matrix()
    shift = np.array([12.0, -7.5, 30.0])
    kw = dict(kw)
    kw["points"] = kw["points"] @ R.T + shift
    kw["orientation"] = kw["orientation"] @ R.T
    return kw


@pytest.mark.parametrize("method", ["dense", "arpack"])
def test_rigid_rotation_and_translation_leave_load_factors_unchanged(method):
    kw = frame3d()
    a = fb.solve(line_mesh(**kw), modes=5, method=method).cases[0].load_factors
    b = fb.solve(line_mesh(**_rigid_motion(kw)), modes=5, method=method).cases[0].load_factors
    # frame indifference (common practice)
    np.testing.assert_allclose(b, a, rtol=1e-9)


def test_axial_scaling_and_stiffness_scaling():
    kw = frame3d()
    base = fb.solve(line_mesh(**kw), modes=5).cases[0].load_factors
    for s in (0.25, 3.0):
        scaled = fb.solve(line_mesh(**{**kw, "axial": s * kw["axial"]}), modes=5).cases[0].load_factors
        # Kg is linear in the axial forces: lambda(s N) = lambda(N) / s (common practice)
        np.testing.assert_allclose(scaled, base / s, rtol=1e-10)
    # K is linear in E (bending, axial) and G (torsion): doubling the material doubles lambda
    stiff = fb.solve(line_mesh(**{**kw, "E": 2 * 2.1e11, "G": 2 * 8.1e10}), modes=5).cases[0].load_factors
    np.testing.assert_allclose(stiff, 2 * base, rtol=1e-10)


def test_doubling_E_alone_doubles_flexural_load_factors():
    # a portal in the XZ plane, restrained in its plane only (ux, uz, ry): analysed as a
    # plane frame, its modes are flexural only (no twist), so lambda ~ E
    base = (1, 0, 1, 0, 1, 0)
    kw = dict(points=[[0, 0, 0], [0, 0, 4.0], [6.0, 0, 4.0], [6.0, 0, 0]], cells=[[0, 1], [1, 2], [2, 3]],
              axial=[-1e5, 0.0, -1e5], restraint=[base, FREE, FREE, base])
    ra = fb.solve(line_mesh(**kw))
    assert ra.summary()["model"]["planar"] == "XZ"
    a = ra.cases[0].load_factors
    b = fb.solve(line_mesh(**kw, E=4.2e11)).cases[0].load_factors
    np.testing.assert_allclose(b, 2 * a, rtol=1e-10)    # Timoshenko & Gere 1961: P_cr ~ EI


@pytest.mark.parametrize("method", ["dense", "arpack"])
def test_modes_are_K_orthogonal(method):
    n = 4
    mesh = cantilevers(n, {"a": np.array([-1000.0, -1000.0, -1000.0, -1500.0])})
    for mesh in (line_mesh(**frame3d()), mesh):
        res = fb.solve(mesh, modes=6, method=method)
        fine = res.fine
        K = Assembler.build(fine).stiffness()
        phi = res.cases[0].modes.reshape(len(res.cases[0].modes), -1).T   # (n_dofs, k)
        M = phi.T @ (K @ phi)
        d = np.sqrt(np.diag(M))
        off = M / np.outer(d, d) - np.eye(len(d))
        # eigenvectors of a symmetric-definite pencil are K-orthogonal (common practice)
        assert np.abs(off).max() < 1e-8


def test_reversing_cell_node_order_changes_nothing():
    kw = frame3d()
    cells = kw["cells"].copy()
    flip = np.arange(0, len(cells), 2)                    # every other cell, the bar included
    flip = np.union1d(flip, [len(cells) - 1])
    cells[flip] = cells[flip, ::-1]
    a = fb.solve(line_mesh(**kw), modes=5)
    b = fb.solve(line_mesh(**{**kw, "cells": cells}), modes=5)
    np.testing.assert_allclose(b.cases[0].load_factors, a.cases[0].load_factors, rtol=1e-10)
    # same modes at the input points up to sign
    for i in range(5):
        ma, mb = a.input_mode(0, i), b.input_mode(0, i)
        s = np.sign((ma * mb).sum())
        np.testing.assert_allclose(s * mb, ma, atol=1e-7)


def test_arpack_start_vector_does_not_hide_other_parts():
    """A later case's lowest mode may live where the previous case's mode does not.

    Case "first" buckles column 0; case "second" loads column 0 lightly and column 2
    heavily, so its alpha_cr belongs to column 2.  A Krylov space started from the
    previous mode alone would stay in column 0 and report a wrong, higher alpha_cr.
    """
    mesh = cantilevers(3, {"first": np.array([-1000.0, 0.0, 0.0]),
                           "second": np.array([-100.0, 0.0, -2000.0])})
    res = fb.solve(mesh, modes=4, method="arpack", subdivide=12)
    ref = dense_load_factors(mesh, m=12, k=4, case=1)       # scipy.linalg.eigh (LAPACK)
    np.testing.assert_allclose(res.case("second").load_factors, ref, rtol=1e-8)


def test_default_large_model_path_is_invariant():
    """The default eigensolution of a model large enough for the iterative path (ARPACK first):
    a rigid motion, renumbered points and cells, and millimetres with N/mm^2 give the same load
    factors (frame indifference and consistent units: common practice)."""
    kw = frame3d()
    run = lambda mesh: fb.solve(mesh, modes=5, subdivide=8, mesh_check=False)
    ref = run(line_mesh(**kw))
    assert len(ref.pencil.free) > 240 and ref.cases[0].method == "arpack"
    a = ref.cases[0].load_factors
    moved = run(line_mesh(**_rigid_motion(kw)))
    np.testing.assert_allclose(moved.cases[0].load_factors, a, rtol=1e-9)
    rng = np.random.default_rng(4)
    n = len(kw["points"])
    perm = rng.permutation(n)
    inv = np.argsort(perm)
    order = rng.permutation(len(kw["cells"]))
    kw2 = dict(kw, points=kw["points"][perm], restraint=np.asarray(kw["restraint"])[perm],
               cells=inv[np.asarray(kw["cells"])][order], axial=np.asarray(kw["axial"], float)[order],
               orientation=np.asarray(kw["orientation"])[order], bar=np.asarray(kw["bar"])[order])
    np.testing.assert_allclose(run(line_mesh(**kw2)).cases[0].load_factors, a, rtol=1e-9)
    mm = line_mesh(**dict(kw, points=kw["points"] * 1e3))
    for name, f in (("E", 1e-6), ("G", 1e-6), ("A", 1e6), ("Iy", 1e12), ("Iz", 1e12), ("J", 1e12)):
        mm.cell_data[name] = [np.asarray(mm.cell_data[name][0]) * f]
    np.testing.assert_allclose(run(mm).cases[0].load_factors, a, rtol=1e-9)
