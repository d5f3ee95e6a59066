r"""Moment terms of the geometric stiffness: lateral-torsional buckling.

End moments
-----------
``moment_start`` and ``moment_end`` are the *internal* moments (stress
resultants) at the two ends of a cell, in its local axes ``[T, My, Mz]``, with
the positive-face convention: the moment that the part beyond the section
exerts on the part before it, so that the normal stress is
:math:`\sigma = N/A + M_y z / I_y - M_z y / I_z`.  A member under a uniform
moment has ``moment_start == moment_end``; the bending moment varies linearly
in between.  (From a linear run's element end forces ``f`` acting on the
element: ``moment_start = -f[3:6]``, ``moment_end = f[9:12]``.)

Second-order energy
-------------------
For a doubly symmetric section (shear centre at the centroid), lateral
displacements ``v`` (along y), ``w`` (along z) and twist :math:`\theta`, the
bending moments add to the axial-force terms of the second-order strain energy

.. math::

    U_M = \int_0^L \bigl( M_y\,\theta\,v'' + M_z\,\theta\,w'' \bigr)\,dx ,

the form of the energy equation of lateral-torsional buckling (Timoshenko &
Gere 1961, Theory of Elastic Stability, 2nd ed., ch. 6; Trahair 1993,
Flexural-Torsional Buckling of Structures, ch. 6: :math:`2 M \phi u''` in
:math:`\tfrac12\int(\dots)`).  It follows from the Green strain of the fibres,
:math:`\tfrac12\int\!\!\int \sigma (u_y'^2 + u_z'^2)\,dA\,dx` with
:math:`u_y = v - z\theta`, :math:`u_z = w + y\theta`, after integration by parts.
With the element's cubic (Hermite, or Timoshenko when shear areas are given)
``v``, ``w``, linear :math:`\theta` and linear :math:`M`, the element matrix is

.. math::

    K_{g,M} = \int_0^L \bigl( M_y(x)\,(N_\theta^T N_v'' + N_v''^T N_\theta) +
              M_z(x)\,(N_\theta^T N_w'' + N_w''^T N_\theta) \bigr)\,dx ,

integrated exactly by 3-point Gauss quadrature, then condensed for end releases
like the other element matrices.  This captures lateral-torsional buckling of
beams and beam-columns (checked against :math:`M_{cr} = \frac{\pi}{L}\sqrt{E I_z
G J}`, Timoshenko & Gere 1961, sec. 6.2).

Not included (documented limits): torque terms (Greenhill/Wagner effects of
``T``), the joint-moment corrections that make the moments semi-tangential at
non-collinear joints in the element of Yang & McGuire (1986, J. Struct. Eng.
112(4)) and McGuire, Gallagher & Ziemian (2000, Matrix Structural Analysis, 2nd
ed., ch. 9), monosymmetry (Wagner) terms and load-height effects.
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError

#: Gauss-Legendre points and weights on [0, 1]
_GP = (np.array([-np.sqrt(0.6), 0.0, np.sqrt(0.6)]) + 1) / 2
_GW = np.array([5.0, 8.0, 5.0]) / 18


def hermite_d2(xi: float, L: np.ndarray, phi: np.ndarray | None = None) -> np.ndarray:
    """Second derivatives of the deflection shape functions at ``xi`` (e, 4), DOFs (v1, t1, v2, t2)
    with ``t = dv/dx`` (Timoshenko element with shear parameter ``phi``; Hermite for ``phi = 0``)."""
    p = np.zeros_like(L) if phi is None else phi
    mu = 1.0 / (1.0 + p)
    L2 = L * L
    return np.stack([mu * (12 * xi - 6) / L2, mu * (6 * xi - 4 - p) / L,
                     mu * (6 - 12 * xi) / L2, mu * (6 * xi - 2 + p) / L], axis=1)


def moment_geometric_local(L, moments, phi_y=None, phi_z=None) -> np.ndarray:
    """Local geometric stiffness of end moments ``moments`` (e, 6) = [T, My, Mz] at start, end."""
    L = np.asarray(L, float)
    M = np.asarray(moments, float)
    K = np.zeros((len(L), 12, 12))
    iv = np.array([1, 5, 7, 11])                # v1, rz1, v2, rz2 (rz = dv/dx)
    iw = np.array([2, 4, 8, 10])                # w1, ry1, w2, ry2 (ry = -dw/dx)
    sw = np.array([1.0, -1.0, 1.0, -1.0])
    it = np.array([3, 9])
    for xi, wt in zip(_GP, _GW):               # three quadrature points, vectorised over elements
        nt = np.array([1 - xi, xi])
        my = M[:, 1] * (1 - xi) + M[:, 4] * xi
        mz = M[:, 2] * (1 - xi) + M[:, 5] * xi
        dv = hermite_d2(xi, L, phi_y)
        dw = hermite_d2(xi, L, phi_z) * sw
        c = (wt * L)[:, None, None]
        Bv = c * my[:, None, None] * nt[None, :, None] * dv[:, None, :]     # (e, 2, 4)
        Bw = c * mz[:, None, None] * nt[None, :, None] * dw[:, None, :]
        K[:, it[:, None], iv[None, :]] += Bv
        K[:, it[:, None], iw[None, :]] += Bw
    return K + np.transpose(K, (0, 2, 1))


def fine_moments(refined, moments: np.ndarray) -> np.ndarray:
    """End moments of the fine elements: linear interpolation along each sub-divided cell."""
    M = np.asarray(moments, float)
    emap = refined.element_map
    m = refined.m
    coarse = refined.coarse
    out = M[emap].copy()
    if m > 1 and not coarse.bar.all():
        nb = int((~coarse.bar).sum())
        j = np.concatenate([np.tile(np.arange(m), nb), np.zeros(len(emap) - nb * m, int)])
        t0 = (j / m)[:, None]
        t1 = ((j + 1) / m)[:, None]
        a, b = M[emap, :3], M[emap, 3:]
        beam = np.arange(len(emap)) < nb * m
        out[beam, :3] = (a + (b - a) * t0)[beam]
        out[beam, 3:] = (a + (b - a) * t1)[beam]
    out[refined.frame.bar] = 0.0
    return out


def moment_geometric_condensed(frame, moments, local) -> np.ndarray:
    """Local element matrices (e, 12, 12) of the moment terms, condensed for end releases like
    the other element matrices; ``local = elements.local_matrices(frame)``.  The assembly
    (:func:`moment_geometric_global`) and the energies (:mod:`framebuckle.engineering.solvedmatrices`) use it."""
    from .elements import shear_parameters
    from ..model.releases import condense
    C = local[3]
    L = frame.lengths()
    phi = shear_parameters(frame, L, slice(None))
    Gm = moment_geometric_local(L, moments, *phi)
    Gm[frame.bar] = 0.0
    if C is not None:
        Gm = condense(Gm, C)
    return Gm


def moment_geometric_global(frame, moments, local) -> np.ndarray:
    """Global element matrices (e, 12, 12) of the moment terms; ``local = elements.local_matrices(frame)``."""
    T = local[2]
    Gm = moment_geometric_condensed(frame, moments, local)
    return np.einsum("eji,ejk,ekl->eil", T, Gm, T, optimize=True)


def read_moment_fields(names, cell_field, study, cell_ids, src) -> dict:
    """``{case suffix: (e, 6) end moments}`` from cell fields ``moment_start[.<case>]``/``moment_end[.<case>]``.

    ``names`` are the mesh's cell field names, ``cell_field(name)`` returns a (e, 3)
    field expanded to elements.  Cells split into several consecutive elements
    (``line3``) get linearly interpolated moments.
    """
    s_name, e_name = study.field_name("moment_start"), study.field_name("moment_end")
    ids = np.asarray(cell_ids)
    new = np.r_[True, ids[1:] != ids[:-1]]
    g = np.cumsum(new) - 1
    k_in = np.arange(len(ids)) - np.flatnonzero(new)[g]
    n_of = np.bincount(g)[g]
    t0 = (k_in / n_of)[:, None]
    t1 = ((k_in + 1) / n_of)[:, None]
    out = {}
    for k in names:
        if not (k == s_name or k.startswith(s_name + ".")):
            continue
        suffix = k[len(s_name):].lstrip(".")
        other = e_name + ("." + suffix if suffix else "")
        if other not in names:
            raise InputError(f"cell field '{k}' is given but '{other}' is not: give the internal moments "
                             f"[T, My, Mz] at both ends", source=src)
        ms, me = cell_field(k), cell_field(other)
        M = np.concatenate([ms + (me - ms) * t0, ms + (me - ms) * t1], axis=1)
        if not np.isfinite(M).all():
            i = int(np.flatnonzero(~np.isfinite(M).all(axis=1))[0])
            raise InputError(f"cell fields '{k}'/'{other}' have NaN or infinite values at cell {ids[i]}",
                             source=src)
        out[suffix] = M
    return out
