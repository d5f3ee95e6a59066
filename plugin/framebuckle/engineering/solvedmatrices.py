r"""The element matrices of a solved load case, exactly as the solve assembled them.

Everything computed from a mode after the solve (strain energies and geometric
work per member, energy shares, sensitivities, the mode's end moments) must use
the matrices whose eigenproblem produced the mode; otherwise the shares do not
add up (:math:`\phi^T K \phi = \alpha\,(-\phi^T K_g \phi)` fails) and members
that carry nothing are named as carrying the mode.  The blocks below are built
by the same functions as the assembly:

* elastic and unit-force geometric stiffness from
  :func:`framebuckle.mechanics.elements.local_matrices` (shear flexibility, end releases
  condensed: :math:`C^T K C`, :math:`C^T G C`), as :class:`~framebuckle.mechanics.assemble.Assembler`;
* the end-moment terms, when the solve used them for this case, from
  :func:`framebuckle.mechanics.moments.moment_geometric_condensed`, as the pipeline's
  case geometric stiffness;
* with warping DOFs, the 14 x 14 matrices of
  :func:`framebuckle.solver.warping.local14_condensed` / ``moment14_condensed`` for the
  elements with ``Iw``, as :class:`~framebuckle.solver.warping.WarpingAssembler`.

A released DOF has zero rows and columns in the condensed matrices, so the
quadratic forms :math:`u^T \tilde K u` with the element's nodal DOFs are the
energies of the element with its released DOFs recovered
(:math:`u_{elem} = C u`), and the end forces :math:`\tilde K u` are zero at a
released end.

Blocks are yielded for at most :data:`CHUNK` elements at a time (memory bound).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..mechanics.elements import element_dofs, local_matrices

#: sub-elements per block (bounds memory to ~100 MB)
CHUNK = 20000

#: local DOF groups of the 12-DOF element (the elastic matrix is block-diagonal in them)
GROUPS12 = {"axial": [0, 6], "twist": [3, 9], "bend_y": [2, 4, 8, 10], "bend_z": [1, 5, 7, 11]}
#: the same for elements with warping DOFs (twist cubic: theta1, theta2, theta1', theta2')
GROUPS14 = dict(GROUPS12, twist=[3, 9, 12, 13])


@dataclass(frozen=True)
class Block:
    """Element matrices of ``sel`` (fine element indices), local axes, condensed."""

    sel: np.ndarray        # (b,)
    K: np.ndarray          # (b, k, k) elastic stiffness
    G: np.ndarray          # (b, k, k) geometric stiffness of the case: N * G_unit (+ moment terms)
    T: np.ndarray          # (b, k, k) local = T @ global
    dofs: np.ndarray       # (b, k) positions in the mode vector (nodal DOFs, then warping DOFs)
    groups: dict           # name -> local DOF indices

    def local(self, phi: np.ndarray) -> np.ndarray:
        """Local element displacements (m, b, k) of mode vectors ``phi`` (m, n)."""
        return np.einsum("eij,mej->mei", self.T, phi[:, self.dofs], optimize=True)


@dataclass(frozen=True)
class CaseMatrices:
    """What the solve of one case assembled, in a form that can be evaluated per element."""

    fine: object            # the refined Frame
    axial: np.ndarray       # (e,) axial forces of the case, tension positive
    moments: np.ndarray | None        # (e, 6) fine end moments, when the solve used them
    warping: tuple | None   # (Iw, Jraw, wnode_dof) with warping DOFs, else None

    @property
    def n_warping(self) -> int:
        return 0 if self.warping is None else int((self.warping[2] >= 0).sum())

    def mode_vectors(self, modes: np.ndarray, warping_modes: np.ndarray | None = None) -> np.ndarray:
        """(k, n) mode vectors: nodal DOFs of ``modes`` (k, n_nodes, 6) then the warping DOFs."""
        k = modes.shape[0]
        phi = modes.reshape(k, -1)
        if self.warping is None:
            return phi
        if warping_modes is None or warping_modes.shape != (k, self.n_warping):
            raise ValueError("the modes of a model with warping DOFs need their warping DOF values")
        return np.concatenate([phi, warping_modes], axis=1)

    def blocks(self, which: np.ndarray | None = None, chunk: int = CHUNK):
        """Yield :class:`Block` for the elements ``which`` (indices or mask; default all)."""
        fine = self.fine
        idx = np.arange(fine.n_elements) if which is None else np.asarray(which)
        if idx.dtype == bool:
            idx = np.flatnonzero(idx)
        for lo in range(0, len(idx), chunk):
            yield from self._blocks(idx[lo:lo + chunk])

    def _blocks(self, sel: np.ndarray):
        fine = self.fine
        sub = _subset(fine, sel)
        local = local_matrices(sub)
        Kl, Gl, T, _ = local
        N = self.axial[sel]
        G = Gl * N[:, None, None]
        if self.moments is not None:
            from ..mechanics.moments import moment_geometric_condensed
            G = G + moment_geometric_condensed(sub, self.moments[sel], local)
        dofs = element_dofs(sub)
        if self.warping is None:
            yield Block(sel, Kl, G, T, dofs, GROUPS12)
            return
        from ..mechanics.elements import shear_parameters
        from ..solver.warping import local14_condensed, moment14_condensed
        Iw, Jraw, wdof = self.warping
        w = np.flatnonzero((Iw[sel] > 0) & ~fine.bar[sel])
        s = np.setdiff1d(np.arange(len(sel)), w)
        if s.size:
            yield Block(sel[s], Kl[s], G[s], T[s], dofs[s], GROUPS12)
        if w.size:
            K14, G14, C14, T14 = local14_condensed(sub, w, Iw[sel][w], Jraw[sel][w])
            G14 = G14 * N[w, None, None]
            if self.moments is not None:
                Lw = sub.lengths()[w]
                G14 = G14 + moment14_condensed(Lw, self.moments[sel][w], shear_parameters(sub, Lw, w), C14)
            d14 = np.concatenate([dofs[w], wdof[sub.elements[w]]], axis=1)
            yield Block(sel[w], K14, G14, T14, d14, GROUPS14)


def _subset(frame, sel):
    """The frame with only the elements ``sel`` (all nodes kept: DOF numbers unchanged)."""
    if len(sel) == frame.n_elements and (sel == np.arange(frame.n_elements)).all():
        return frame
    kw = {k: getattr(frame, k) for k in frame.__dataclass_fields__}
    for k in ("elements", "E", "G", "A", "Iy", "Iz", "J", "Ip", "orientation", "bar", "parent",
              "release", "Asy", "Asz"):
        if kw[k] is not None:
            kw[k] = kw[k][sel]
    return type(frame)(**kw)


def for_case(result, case) -> CaseMatrices:
    """The :class:`CaseMatrices` of ``case`` (a CaseResult or its name) of a solved ``result``."""
    c = result.case(case) if not hasattr(case, "modes") else case
    im, ref = result.input, result.refined
    lc = im.cases[[x.name for x in im.cases].index(c.name)]
    axial = np.asarray(ref.fine_axial(lc.axial), float)
    moments = None
    if getattr(c, "moment_terms", False):
        from ..mechanics.moments import fine_moments
        moments = fine_moments(ref, lc.extra["moments"])
    warping = None
    if result.settings.get("warping") == "dof" and im.extra.get("Iw") is not None:
        fine = ref.frame
        Iw = np.nan_to_num(np.asarray(ref.fine_axial(im.extra["Iw"]), float))
        Jraw = np.asarray(ref.fine_axial(im.extra["J_raw"]), float)
        w = (Iw > 0) & ~fine.bar
        wnodes = np.unique(fine.elements[w])
        wdof = np.full(fine.n_nodes, -1, np.int64)
        wdof[wnodes] = fine.n_dofs + np.arange(len(wnodes))
        warping = (Iw, Jraw, wdof)
    return CaseMatrices(ref.frame, axial, moments, warping)
