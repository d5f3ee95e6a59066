"""The numbers the HTML report shows beside its pictures: the share of a mode's strain energy per
input element (from the solve's own matrices) and the model statistics."""

from __future__ import annotations

import numpy as np


def energy_shares(result, case, k: int = 1) -> np.ndarray:
    """Share of mode ``k``'s elastic strain energy in every input element, shape (e_input,)."""
    from ..engineering.participation import element_energies
    from ..engineering.solvedmatrices import for_case
    c = result.case(case)
    wm = None if c.warping_modes is None else c.warping_modes[k - 1:k]
    energy = element_energies(for_case(result, c), c.modes[k - 1:k], warping_modes=wm).strain[0]
    per = np.bincount(result.refined.element_map, weights=energy, minlength=result.model.n_elements)
    tot = per.sum()
    return per / tot if tot > 0 else per


def model_stats(result) -> list[tuple[str, str]]:
    s = result.summary()["model"]
    f = result.model
    L = f.lengths()
    ext = np.ptp(f.nodes, axis=0)
    units = result.input.units or {}
    lu = f" {units['length']}" if units.get("length") else ""
    rows = [("input points", s["nodes"]),
            ("members (input line elements)", f"{s['elements']} ({int((~f.bar).sum())} beams, "
                                               f"{int(f.bar.sum())} pin-ended bars)"),
            ("total member length", f"{L.sum():.4g}{lu}"),
            ("extent X x Y x Z", " x ".join(f"{v:.4g}" for v in ext) + lu),
            ("analysis points / elements", f"{s['fine_nodes']} / {s['fine_elements']} "
                                           f"(sub-division {result.settings.get('subdivide')})"),
            ("degrees of freedom (free)", f"{s['dofs']} ({s['free_dofs']})"),
            ("rotations restrained automatically", s["auto_restrained_rotations"]),
            ("planar analysis", s["planar"] or "no (3D)"),
            ("load cases", len(result.cases)),
            ("units", ", ".join(f"{k} {v}" for k, v in units.items() if v) or "as in the input file")]
    return [(a, str(b)) for a, b in rows]
