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
        return float(self.load_factors[0]) if len(self.load_factors) else None

    def message(self) -> str:
        if self.status == "no_compression":
            return "no member is in compression: no compressive instability"
        if self.status == "no_positive":
            return "no positive load factor found: the compressed members do not buckle under this case"
        return ""


@dataclass
class Result:
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
        return self.input.frame

    @property
    def fine(self):
        return self.refined.frame

    def case(self, name_or_index) -> CaseResult:
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
        return {c.name: c.load_factors.copy() for c in self.cases}

    def input_mode(self, case, k: int) -> np.ndarray:
        """Mode ``k`` (0-based) of ``case`` at the input points, shape (n_points, 6)."""
        c = self.case(case)
        return c.modes[k][: self.input.frame.n_nodes]

    def summary(self) -> dict:
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
