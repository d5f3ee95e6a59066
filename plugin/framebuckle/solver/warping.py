r"""Warping torsion (Vlasov): a 7th degree of freedom, the rate of twist, at the nodes of beams with Iw.

Switched on with ``[analysis] warping = "dof"`` (Python ``solve(..., warping="dof")``)
for models with a cell field ``Iw``, and by the default ``"auto"`` where the
equivalent torsion constant ``J + pi^2 E Iw / (G L^2)`` of the 6-DOF path is not
well defined (:mod:`framebuckle.mechanics.twistlength`: a member whose ``E Iw`` changes or
whose twist is released inside it) or warping is restrained somewhere;
otherwise (and always without ``Iw``) the 6-DOF path runs unchanged.

Element
-------
In elements with ``Iw > 0`` the twist :math:`\theta(x)` is cubic (Hermite) in
the end values :math:`(\theta_1, \theta_1', \theta_2, \theta_2')` instead of
linear in :math:`(\theta_1, \theta_2)`.  The warping DOFs :math:`\theta'` are
appended after the ``6 n`` nodal DOFs, one per node touched by such elements,
shared by all of them (warping continuous through joints and sub-division
points).  With :math:`N` the Hermite shape functions on ``(theta1, theta1',
theta2, theta2')``:

.. math::

    K_{\theta} = G J \int_0^L N'^T N' dx + E I_w \int_0^L N''^T N'' dx ,\qquad
    K_{g,\theta} = \frac{P I_p}{A} \int_0^L N'^T N' dx
    + \int_0^L (M_y N^T v'' + M_z N^T w'' + \text{sym.})\,dx ,

the elastic and second-order energies of non-uniform torsion of a doubly
symmetric thin-walled member (Vlasov 1961, Thin-Walled Elastic Beams; Timoshenko
& Gere 1961, Theory of Elastic Stability, secs. 5.2-5.4 and 6.3; Trahair 1993,
Flexural-Torsional Buckling of Structures, ch. 5-6).  The bending, axial and
shear parts are those of :mod:`framebuckle.mechanics.elements`; end releases are
condensed out of the 14 x 14 element matrices in the same way.

Warping restraint
-----------------
Warping is free (fork supports) unless restrained: point field
``warping_restraint`` (0/1 per point), ``[warping] supports = "restrained"``
(every point with a restraint), ``[warping] points = [ids]``.  In a planar
analysis (twist restrained) all warping DOFs are restrained.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from ..mechanics.assemble import scatter_csr
from ..mechanics.elements import (_bend, _put, beam_elastic_local, beam_geometric_local, element_dofs,
                       element_matrices, geometric_4x4, local_axes, local_matrices, shear_parameters,
                       transformation)
from ..errors import InputError
from ..mechanics.moments import _GP, _GW, hermite_d2, moment_geometric_global
from .solve import Constraints, check_supported, find_constraints
from ..mechanics.twistlength import describe

#: local indices of the twist DOFs of a 14-DOF element: theta1, theta1', theta2, theta2'
TWIST = np.array([3, 12, 9, 13])


def parse(value, study, source) -> str:
    v = study.get("analysis", "warping", default="auto") if value is None else value
    if v not in ("auto", "dof", "equivalent"):
        raise InputError(f"[analysis] warping must be \"auto\", \"dof\" or \"equivalent\", got {v!r}",
                         source=study.source if value is None else source)
    return v


def choose(mode: str, im, study) -> dict:
    """Options of ``api.run`` for the setting ``mode`` of a model with ``Iw``.

    ``"warping"`` (restrained points) when the warping DOF is to run, plus the note
    (``"warping_notes"``) or warning (``"warping_warnings"``) that explains the choice.
    """
    wr = restrained_points(im, study)
    if mode == "dof":
        return {"warping": wr}
    tl = im.extra.get("twist_lengths")
    undefined = tl.undefined if tl is not None else ()
    why = []
    if undefined:
        why.append("the equivalent torsion constant J + pi^2 E Iw / (G L^2) is not well defined for "
                   + describe(undefined))
    if wr.any():
        why.append(f"warping is restrained at {int(wr.sum())} point(s) (the equivalent constant "
                   f"assumes warping-free member ends)")
    if not why:
        return {}
    if mode == "auto":
        return {"warping": wr, "warping_notes": ["warping = \"auto\": torsion uses the warping DOF "
                                                 "because " + "; ".join(why)]}
    return {"warping_warnings": [
        "warping = \"equivalent\" although " + "; ".join(why) + ": those members use the length of "
        "each uniform piece between releases and warping restraints are ignored, an approximation; "
        "warping = \"auto\" or \"dof\" uses the warping DOF"]}


def restrained_points(im, study) -> np.ndarray:
    """Input points whose warping is restrained, (n_input,) bool."""
    n = im.frame.n_nodes
    out = np.zeros(n, bool)
    name = study.field_name("warping_restraint")
    if name in im.mesh.point_data:
        r = np.asarray(im.mesh.point_data[name], float).reshape(-1)
        if r.shape != (n,) or not np.isin(r, (0.0, 1.0)).all():
            raise InputError(f"point field '{name}' must hold one 0 or 1 per point", source=im.source)
        out |= r.astype(bool)
    sup = study.get("warping", "supports", default="free")
    if sup not in ("free", "restrained"):
        raise InputError(f"[warping] supports must be \"free\" or \"restrained\", got {sup!r}",
                         source=study.source)
    if sup == "restrained":
        out |= im.frame.restraint.any(axis=1)
    pts = np.asarray(study.get("warping", "points", default=[]), np.int64)
    if ((pts < 0) | (pts >= n)).any():
        raise InputError("[warping] points refers to a point that does not exist", source=study.source)
    out[pts] = True
    return out


def twist_shapes(xi: float, L: np.ndarray):
    """Hermite shape functions of the twist and their x-derivatives at ``xi``, each (e, 4)."""
    one = np.ones_like(L)
    N = np.stack([one * (1 - 3 * xi**2 + 2 * xi**3), L * (xi - 2 * xi**2 + xi**3),
                  one * (3 * xi**2 - 2 * xi**3), L * (-xi**2 + xi**3)], axis=1)
    return N


def local14(frame, sel, L, Iw, Jraw):
    """Local 14 x 14 elastic and unit-force geometric matrices of the warping elements ``sel``."""
    phi = shear_parameters(frame, L, sel)
    n = len(L)
    K = np.zeros((n, 14, 14))
    Gm = np.zeros((n, 14, 14))
    K[:, :12, :12] = beam_elastic_local(L, frame.E[sel], frame.G[sel], frame.A[sel], frame.Iy[sel],
                                        frame.Iz[sel], frame.J[sel], *phi)
    Gm[:, :12, :12] = beam_geometric_local(L, frame.A[sel], frame.Ip[sel], *phi)
    tw = np.array([3, 9])
    K[:, tw[:, None], tw[None, :]] = 0.0            # linear twist replaced by the cubic one
    Gm[:, tw[:, None], tw[None, :]] = 0.0
    S1 = geometric_4x4(L, +1)                       # int N'^T N' dx
    S2 = _bend(np.ones(n), L, +1)                   # int N''^T N'' dx
    _put(K, TWIST, (frame.G[sel] * Jraw)[:, None, None] * S1 + (frame.E[sel] * Iw)[:, None, None] * S2)
    _put(Gm, TWIST, (frame.Ip[sel] / frame.A[sel])[:, None, None] * S1)
    return K, Gm


def moment14(L, moments, phi_y=None, phi_z=None) -> np.ndarray:
    """Local 14 x 14 moment terms ``int (My theta v'' + Mz theta w'') dx`` with a cubic twist."""
    M = np.asarray(moments, float)
    K = np.zeros((len(L), 14, 14))
    iv = np.array([1, 5, 7, 11])
    iw = np.array([2, 4, 8, 10])
    sw = np.array([1.0, -1.0, 1.0, -1.0])
    for xi, wt in zip(_GP, _GW):                    # degree 1 + 3 + 1 = 5: exact with 3 points
        nt = twist_shapes(xi, L)
        my = M[:, 1] * (1 - xi) + M[:, 4] * xi
        mz = M[:, 2] * (1 - xi) + M[:, 5] * xi
        dv = hermite_d2(xi, L, phi_y)
        dw = hermite_d2(xi, L, phi_z) * sw
        c = wt * L
        K[:, TWIST[:, None], iv[None, :]] += (c * my)[:, None, None] * nt[:, :, None] * dv[:, None, :]
        K[:, TWIST[:, None], iw[None, :]] += (c * mz)[:, None, None] * nt[:, :, None] * dw[:, None, :]
    return K + np.transpose(K, (0, 2, 1))


def local14_condensed(frame, sel, Iw, Jraw):
    """Local 14 x 14 elastic and unit-force geometric matrices of the warping elements ``sel``
    after end-release condensation, the condensation matrices ``C`` (None without releases) and
    the 14 x 14 transformations: the matrices the assembly uses (and the energies of
    :mod:`framebuckle.engineering.solvedmatrices`)."""
    R, L = local_axes(frame)
    K14, G14 = local14(frame, sel, L[sel], Iw, Jraw)
    C = None
    if frame.release is not None and frame.release[sel].any():
        from ..model.releases import condensation, condense
        rel = np.zeros((len(K14), 14), bool)
        rel[:, :12] = frame.release[sel]
        r = np.flatnonzero(rel.any(axis=1))
        C = np.broadcast_to(np.eye(14), K14.shape).copy()
        C[r] = condensation(K14[r], rel[r], frame.parent[sel][r], frame.source)
        K14[r] = condense(K14[r], C[r])
        G14[r] = condense(G14[r], C[r])
    T14 = np.zeros((len(K14), 14, 14))
    T14[:, :12, :12] = transformation(R[sel])
    T14[:, 12, 12] = T14[:, 13, 13] = 1.0
    return K14, G14, C, T14


def moment14_condensed(L, moments, phi, C=None) -> np.ndarray:
    """:func:`moment14` condensed for end releases with the elements' ``C`` (or None)."""
    m14 = moment14(L, moments, *phi)
    if C is not None:
        from ..model.releases import condense
        m14 = condense(m14, C)
    return m14


class WarpingAssembler:
    """Assembly of a model in which the elements with ``Iw > 0`` have 14 DOFs.

    Same interface as :class:`framebuckle.mechanics.assemble.Assembler` as used by the
    pipeline (``n``, ``stiffness()``, ``geometric(axial)``, ``moment_matrix(M)``).
    """

    def __init__(self, frame, Iw, Jraw, wrestrained_nodes):
        self.frame = frame
        n6 = frame.n_dofs
        iw = np.nan_to_num(np.asarray(Iw, float))
        self.w = np.flatnonzero((iw > 0) & ~frame.bar)
        self.s = np.flatnonzero(~((iw > 0) & ~frame.bar))
        wnodes = np.unique(frame.elements[self.w])
        self.wnode_dof = np.full(frame.n_nodes, -1, np.int64)
        self.wnode_dof[wnodes] = n6 + np.arange(len(wnodes))
        self.n = n6 + len(wnodes)
        self.wfixed_nodes = wnodes[np.asarray(wrestrained_nodes, bool)[wnodes]]

        Ke, Ge, T = element_matrices(frame)
        self.Ke_s, self.Ge_s = Ke[self.s], Ge[self.s]
        K14, G14, self.C, self.T14 = local14_condensed(frame, self.w, iw[self.w],
                                                       np.asarray(Jraw, float)[self.w])
        Lw = frame.lengths()[self.w]
        self.K14 = self._glob(K14)
        self.G14 = self._glob(G14)
        self.Lw = Lw
        self.phi_w = shear_parameters(frame, Lw, self.w)

        d12 = element_dofs(frame)
        d14 = np.concatenate([d12[self.w], self.wnode_dof[frame.elements[self.w]]], axis=1)
        keys, self._sizes = [], []
        for d in (d12[self.s], d14):
            k = d.shape[1]
            rows = np.broadcast_to(d[:, :, None], (len(d), k, k)).reshape(-1)
            cols = np.broadcast_to(d[:, None, :], (len(d), k, k)).reshape(-1)
            keys.append(rows.astype(np.int64) * self.n + cols)
        uniq, self.slot = np.unique(np.concatenate(keys), return_inverse=True)
        r, c = uniq // self.n, uniq % self.n
        self.indptr = np.zeros(self.n + 1, np.int64)
        np.cumsum(np.bincount(r, minlength=self.n), out=self.indptr[1:])
        self.indices = c
        self._local = None

    def _glob(self, M):
        return np.einsum("eji,ejk,ekl->eil", self.T14, M, self.T14, optimize=True)

    def _csr(self, v12, v14):
        vals = np.concatenate([np.asarray(v12).reshape(-1), np.asarray(v14).reshape(-1)])
        return scatter_csr(self.slot, vals, self.indices, self.indptr, self.n)

    def stiffness(self):
        return self._csr(self.Ke_s, self.K14)

    def geometric(self, axial):
        a = np.asarray(axial, float)
        return self._csr(self.Ge_s * a[self.s, None, None], self.G14 * a[self.w, None, None])

    def moment_matrix(self, moments):
        """Moment terms (framebuckle.mechanics.moments) for fine-element end moments (e, 6)."""
        M = np.asarray(moments, float)
        if self._local is None:
            self._local = local_matrices(self.frame)
        m12 = moment_geometric_global(self.frame, M, self._local)[self.s]
        m14 = moment14_condensed(self.Lw, M[self.w], self.phi_w, self.C)
        return self._csr(m12, self._glob(m14))

    def constraints(self, frame, K, planar, n_input, source) -> Constraints:
        """Constraints of the 6-DOF part (as without warping) plus restrained warping DOFs."""
        n6 = frame.n_dofs
        c6 = find_constraints(frame, sp.csr_matrix(K)[:n6, :n6], planar)
        check_supported(frame, c6, n_input, source)
        wfix = np.zeros(self.n - n6, bool)
        wfix[self.wnode_dof[self.wfixed_nodes] - n6] = True
        notes = list(c6.notes)
        if c6.planar_axis is not None:
            wfix[:] = True
        fixed = np.concatenate([c6.fixed, wfix])
        notes.append(f"warping: {self.n - n6} warping DOF(s) at the points of {len(self.w)} element(s) "
                     f"with Iw, {int(wfix.sum())} restrained")
        return Constraints(np.flatnonzero(~fixed), fixed, c6.n_auto, c6.planar_axis, tuple(notes))
