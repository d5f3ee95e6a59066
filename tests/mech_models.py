"""Small invented models shared by the mechanics tests (meshio meshes built in memory)."""

import meshio
import numpy as np

E, G = 2.1e11, 8.1e10


def column_mesh(L=4.0, ncell=1, A=4e-3, Iy=6e-6, Iz=6e-6, J=1e-6, P=-1000.0, base="pinned",
                top="pinned", axis=2, cell_data=None, point_data=None):
    """A straight column along global ``axis`` in ``ncell`` line cells under axial force ``P``.

    base/top: "pinned" (translations fixed, top free along the axis, twist fixed at base),
    "fixed" (all six fixed) or "guided" (lateral translations fixed).
    """
    n = ncell + 1
    pts = np.zeros((n, 3))
    pts[:, axis] = np.linspace(0.0, L, n)
    cells = np.column_stack([np.arange(ncell), np.arange(1, n)])
    r = np.zeros((n, 6))
    lat = [i for i in range(3) if i != axis]
    if base == "fixed":
        r[0] = 1
    else:
        r[0, :3] = 1
        r[0, 3 + axis] = 1
    if top == "fixed":
        r[-1] = 1
        r[-1, axis] = 0
    else:
        r[-1, lat] = 1
    cd = {"axial_force": P, "E": E, "G": G, "A": A, "Iy": Iy, "Iz": Iz, "J": J}
    cd.update(cell_data or {})
    cdata = {k: [_per_cell(v, ncell)] for k, v in cd.items()}
    pdata = {"restraint": r}
    pdata.update(point_data or {})
    return meshio.Mesh(pts, [("line", cells)], point_data=pdata, cell_data=cdata)


def _per_cell(v, ncell):
    """Scalar -> (ncell,); vector of components -> (ncell, c); per-cell arrays as given."""
    a = np.asarray(v, float)
    if a.ndim == 0:
        return np.full(ncell, float(a))
    if a.ndim == 1 and len(a) != ncell:
        return np.tile(a, (ncell, 1))
    return a.copy()


def static_solve(frame, loads):
    """First-order displacements (n, 6) of ``frame`` under nodal loads (n, 6) (test helper)."""
    import scipy.sparse.linalg as spla
    from framebuckle.mechanics.assemble import Assembler
    from framebuckle.solver.solve import find_constraints
    K = Assembler.build(frame).stiffness()
    cons = find_constraints(frame, K, False)
    u = np.zeros(frame.n_dofs)
    f = cons.free
    u[f] = spla.spsolve(K.tocsc()[f][:, f], np.asarray(loads, float).reshape(-1)[f])
    return u.reshape(-1, 6)
