"""Results of a buckling run: load factors and modes per case, mapped to the input."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..model.model import DOF_NAMES

CAUTIONS = (
    "alpha_cr is an elastic indicator of sensitivity to buckling, not a member or structural resistance.",
    "Check the results against the governing local design code; imperfections, plasticity and "
    "connection behaviour are not included.",
    "Results must be reviewed by a qualified engineer before they are relied on.",
)


@dataclass
class CaseResult:
    """Load factors and modes of one load case (an item of :attr:`Result.cases`).

    Made by :func:`framebuckle.solve`; not built by hand.

    Parameters
    ----------
    name : str
        The load case's name (``default`` for a file with one unnamed case).
    status : str
        ``"ok"``, ``"no_compression"`` (no member is in compression) or ``"no_positive"``
        (no positive load factor: the compressed members do not buckle under this case).
    load_factors : numpy.ndarray
        Shape ``(k,)``, ascending; the first is alpha_cr.
    modes : numpy.ndarray
        Shape ``(k, n_fine_points, 6)``: translations and rotations at the points of the refined
        model (input points first), normalised to a largest translation of 1.
    residuals : numpy.ndarray
        ``||(K + lambda Kg) phi|| / ||K phi||`` of every mode.
    cluster_continues : bool
        The load factor after the last requested one equals it: more copies follow.
    method : str
        The eigensolver that produced the modes.
    notes : list of str
        Notes on this case (for the summary and the terminal).
    checks : dict
        The checks of the eigensolution: largest residual, K-orthogonality, Sturm count.
    mesh_check : dict or None
        The mesh adequacy check (alpha_cr at twice the sub-division, Richardson extrapolation).
    moment_terms : bool
        The end-moment terms were in the geometric stiffness.
    warping_modes : numpy.ndarray or None
        Shape ``(k, n_warping_dofs)``: the modes' warping DOFs (same scale), when solved with them.
    """

    name: str
    status: str                      # "ok", "no_compression", "no_positive"
    load_factors: np.ndarray         # (k,) ascending
    modes: np.ndarray                # (k, n_fine_nodes, 6), max translation 1
    residuals: np.ndarray = field(default_factory=lambda: np.empty(0))
    cluster_continues: bool = False
    method: str = ""
    notes: list = field(default_factory=list)
    checks: dict = field(default_factory=dict)   # verify.check_case: residuals, Sturm count, ...
    mesh_check: dict | None = None   # see framebuckle.solver.adequacy
    moment_terms: bool = False       # the end-moment terms were in the geometric stiffness
    warping_modes: np.ndarray | None = None   # (k, n_warping_dofs) the modes' warping DOFs, same scale

    @property
    def alpha_cr(self) -> float | None:
        """The lowest load factor (``None`` when the case has none)."""
        return float(self.load_factors[0]) if len(self.load_factors) else None

    def message(self) -> str:
        """Why the case has no load factor.

        Returns
        -------
        str
            The explanation for the status ``no_compression`` or ``no_positive``; empty for ``ok``.
        """
        if self.status == "no_compression":
            return "no member is in compression: no compressive instability"
        if self.status == "no_positive":
            return "no positive load factor found: the compressed members do not buckle under this case"
        return ""


@dataclass
class Result:
    """The result of :func:`framebuckle.solve`: every load case, the model and the settings.

    Made by :func:`framebuckle.solve` (or ``grid.buckle.solve``); not built by hand.

    Parameters
    ----------
    input : object
        The input model as read (frame, load cases, point sets, units, source file).
    refined : object
        The sub-divided model the matrices were built on.
    constraints : object
        Restrained and free DOFs (planar analysis, automatically restrained rotations).
    cases : list of CaseResult
        One entry per load case, in the order of the input.
    notes : list of str
        Notes on the whole run.
    settings : dict
        The settings used (modes, sub-division, eigensolver, ...).
    warnings : list of str
        Plausibility and conditioning warnings.
    timings : dict
        Seconds per stage (read, assembly, factorization, cases, ...); ``case_stages``: per
        solved case, a dict of basic_kg, kg (factored sum), warm_start, eigensolution, checks.
    pencil : object
        The matrices every case was solved with, for later stages that extend a solution;
        ``None`` when not solved here.
    envelope : dict or None
        The worst combination over the ``[envelope]`` factor ranges (governing vertex, its
        factors and alpha_cr, the runner-up, certified bounds of listed combinations); ``None``
        without ``[envelope]``.
    """

    input: "object"                  # read.InputModel
    refined: "object"                # refine.Refined
    constraints: "object"            # solve.Constraints
    cases: list
    notes: list
    settings: dict
    warnings: list = field(default_factory=list)   # sanity / conditioning warnings
    timings: dict = field(default_factory=dict)   # seconds per stage (read, assembly, ...)
    # the matrices every case was solved with (pipeline.pencils.CasePencils), for later stages that
    # extend a solution (check: the upward search for a sway mode); None when not solved here
    pencil: "object" = field(default=None, repr=False, compare=False)
    #: worst combination over [envelope] factor ranges (framebuckle.pipeline.combosolve.envelope_summary)
    envelope: dict | None = None

    @property
    def model(self):
        """The input model's frame (points and cells as read)."""
        return self.input.frame

    @property
    def fine(self):
        """The refined frame (input points first, then the sub-division points)."""
        return self.refined.frame

    def case(self, name_or_index) -> CaseResult:
        """One load case by name or position.

        Parameters
        ----------
        name_or_index : str or int
            The case's name, or its position in :attr:`cases`.

        Returns
        -------
        CaseResult
            The load case.

        Raises
        ------
        InputError
            When no case has that name; the message lists the cases.
        """
        if isinstance(name_or_index, int):
            return self.cases[name_or_index]
        for c in self.cases:
            if c.name == name_or_index:
                return c
        from ..errors import InputError
        raise InputError(f"no load case '{name_or_index}'; cases: {', '.join(c.name for c in self.cases)}",
                         source=self.input.source)

    @property
    def load_factors(self) -> dict:
        """Load factors of every case, ``{name: array}`` (copies)."""
        return {c.name: c.load_factors.copy() for c in self.cases}

    def input_mode(self, case, k: int) -> np.ndarray:
        """Mode ``k`` (0-based) of ``case`` at the input points.

        Parameters
        ----------
        case : str or int
            The case's name or position.
        k : int
            The mode, 0-based (0 = alpha_cr).

        Returns
        -------
        numpy.ndarray
            Shape ``(n_points, 6)``: translations and rotations at the input points.
        """
        c = self.case(case)
        return c.modes[k][: self.input.frame.n_nodes]

    def summary(self) -> dict:
        """The JSON summary (``<stem>.summary.json`` of ``framebuckle solve``) as a dict.

        Returns
        -------
        dict
            ``cases`` (per case: name, status, load factors, notes, checks, mesh check), ``model``,
            ``settings``, ``units``, ``notes``, ``warnings`` and ``cautions``.
        """
        f = self.fine
        n_all = int(len(self.constraints.fixed))   # nodal DOFs plus appended warping DOFs
        return {
            "tool": "framebuckle",
            "source": self.input.source,
            "cases": [{
                "name": c.name,
                "status": c.status,
                "load_factors": [float(x) for x in c.load_factors],
                "cluster_continues": bool(c.cluster_continues),
                "max_residual": float(c.residuals.max()) if len(c.residuals) else None,
                "eigensolver": c.method,
                "notes": list(c.notes) + ([c.message()] if c.message() else []),
                "checks": dict(c.checks),
                "mesh_check": None if c.mesh_check is None else dict(c.mesh_check),
                **_factors_entry(self.input, c.name),
            } for c in self.cases],
            "model": {"nodes": int(self.input.frame.n_nodes), "elements": int(self.input.frame.n_elements),
                      "dofs": n_all, "free_dofs": int(len(self.constraints.free)),
                      "fixed_dofs": int(self.constraints.fixed.sum()),
                      "warping_dofs": n_all - int(f.n_dofs),
                      "fine_nodes": int(f.n_nodes), "fine_elements": int(f.n_elements),
                      "auto_restrained_rotations": int(self.constraints.n_auto),
                      "planar": None if self.constraints.planar_axis is None
                      else "XYZ".replace("XYZ"[self.constraints.planar_axis], "")},
            "settings": dict(self.settings),
            "units": dict(self.input.units),
            "notes": list(self.notes),
            "warnings": list(self.warnings),
            "cautions": list(CAUTIONS),
            **({"sections": self.input.extra["sections"]} if self.input.extra.get("sections") else {}),
            **({"envelope": self.envelope} if self.envelope is not None else {}),
        }


def _factors_entry(im, name) -> dict:
    """``{"factors": {...}}`` for a combination (framebuckle.io.combinations), else nothing."""
    for c in im.cases:
        if c.name == name and c.extra.get("combination"):
            return {"factors": {k: float(v) for k, v in c.extra["combination"]["factors"].items()}}
    return {}


def normalise_modes(vecs: np.ndarray, n_nodes: int, size: float = 1.0) -> np.ndarray:
    """(n_dofs, k) -> (k, n_nodes, 6) with max translation 1 and its largest component positive.

    A mode with no translation (twist of members about their axes, ``size`` being the
    model's extent) is normalised to a largest rotation of 1 instead.
    """
    k = vecs.shape[1]
    m = vecs.T.reshape(k, n_nodes, 6).copy()
    for i in range(k):
        tr = np.linalg.norm(m[i, :, :3], axis=1)
        j = int(np.argmax(tr))
        s = tr[j]
        if s <= 1e-9 * np.abs(m[i, :, 3:]).max() * size:
            # a pure twist: translations are round-off; normalise the rotations instead
            j = int(np.argmax(np.abs(m[i, :, 3:]).max(axis=1)))
            s = np.abs(m[i, j, 3:]).max()
            comp = 3 + int(np.argmax(np.abs(m[i, j, 3:])))
        else:
            comp = int(np.argmax(np.abs(m[i, j, :3])))
        sign = 1.0 if m[i, j, comp] >= 0 else -1.0
        m[i] *= sign / s
    return m


def dof_label(i: int) -> str:
    return f"point {i // 6} {DOF_NAMES[i % 6]}"
