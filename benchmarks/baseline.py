"""The script an engineer would otherwise write by hand (the comparison baseline).

A Python loop over elements computes each element's 12 x 12 elastic and
geometric stiffness with numpy, rotates it and adds it into scipy ``lil_matrix``
objects; the restrained DOFs are removed and
``scipy.sparse.linalg.eigsh(K, k, M=-Kg, sigma, mode='buckling')`` gives the
load factors nearest the shift.  Same element formulas as the package (cubic
Hermite beams, consistent geometric stiffness, bars), same sub-division.

Usage: python benchmarks/baseline.py FILE [MODES] [TIME_LIMIT_S]
Prints the assembly time (or, past the time limit, the measured rate and the
extrapolated total) and the eigensolution time.
"""

import sys
import time

import meshio
import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla


def element(p1, p2, E, G, A, Iy, Iz, J, orient, bar):
    d = p2 - p1
    L = np.linalg.norm(d)
    ex = d / L
    ez = orient - orient.dot(ex) * ex
    ez /= np.linalg.norm(ez)
    ey = np.cross(ez, ex)
    R = np.array([ex, ey, ez])
    T = np.zeros((12, 12))
    for b in range(4):
        T[3 * b:3 * b + 3, 3 * b:3 * b + 3] = R
    k = np.zeros((12, 12))
    g = np.zeros((12, 12))
    ea = E * A / L
    k[np.ix_([0, 6], [0, 6])] = ea * np.array([[1, -1], [-1, 1]])
    if bar:
        g[np.ix_([1, 7], [1, 7])] = np.array([[1, -1], [-1, 1]]) / L
        g[np.ix_([2, 8], [2, 8])] = np.array([[1, -1], [-1, 1]]) / L
    else:
        gj = G * J / L
        k[np.ix_([3, 9], [3, 9])] = gj * np.array([[1, -1], [-1, 1]])
        for idx, EI, s in (([1, 5, 7, 11], E * Iz, 1), ([2, 4, 8, 10], E * Iy, -1)):
            c = EI / L ** 3
            kb = c * np.array([[12, s * 6 * L, -12, s * 6 * L], [s * 6 * L, 4 * L * L, -s * 6 * L, 2 * L * L],
                               [-12, -s * 6 * L, 12, -s * 6 * L], [s * 6 * L, 2 * L * L, -s * 6 * L, 4 * L * L]])
            k[np.ix_(idx, idx)] = kb
            gb = np.array([[36, s * 3 * L, -36, s * 3 * L], [s * 3 * L, 4 * L * L, -s * 3 * L, -L * L],
                           [-36, -s * 3 * L, 36, -s * 3 * L], [s * 3 * L, -L * L, -s * 3 * L, 4 * L * L]]) / (30 * L)
            g[np.ix_(idx, idx)] = gb
        g[np.ix_([3, 9], [3, 9])] = (Iy + Iz) / A / L * np.array([[1, -1], [-1, 1]])
    return T.T @ k @ T, T.T @ g @ T


def main(path, modes=10, limit=3600.0):
    m = meshio.read(path)
    pts = m.points
    el = m.cells[0].data
    cd = {k: np.asarray(v[0]) for k, v in m.cell_data.items()}
    case = sorted(k for k in cd if k.startswith("axial_force"))[0]
    # sub-divide beams into 8 like the tool's default (bars stay whole)
    nodes = list(pts)
    elems, src = [], []
    for i, (a, b) in enumerate(el):
        if cd["bar"][i]:
            elems.append((a, b)); src.append(i)
            continue
        chain = [a]
        for t in np.arange(1, 8) / 8:
            nodes.append(pts[a] + t * (pts[b] - pts[a])); chain.append(len(nodes) - 1)
        chain.append(b)
        for j in range(8):
            elems.append((chain[j], chain[j + 1])); src.append(i)
    nodes = np.array(nodes)
    n = 6 * len(nodes)
    K = sp.lil_matrix((n, n))
    KG = sp.lil_matrix((n, n))
    t0 = time.perf_counter()
    done = 0
    for (a, b), i in zip(elems, src):
        ke, ge = element(nodes[a], nodes[b], cd["E"][i], cd["G"][i], cd["A"][i], cd["Iy"][i],
                         cd["Iz"][i], cd["J"][i], cd["orientation"][i], bool(cd["bar"][i]))
        dofs = np.r_[6 * a + np.arange(6), 6 * b + np.arange(6)]
        K[np.ix_(dofs, dofs)] += ke
        KG[np.ix_(dofs, dofs)] += cd[case][i] * ge
        done += 1
        if time.perf_counter() - t0 > limit:
            break
    t_asm = time.perf_counter() - t0
    if done < len(elems):
        est = t_asm * len(elems) / done
        print(f"baseline assembly STOPPED after {done}/{len(elems)} elements in {t_asm:.1f} s; "
              f"extrapolated {est:.1f} s")
        return
    print(f"baseline assembly {t_asm:.3f} s ({len(elems)} elements, {n} DOFs)")
    fixed = np.zeros(n, bool)
    fixed[: 6 * len(pts)] = m.point_data["restraint"].astype(bool).reshape(-1)
    free = np.flatnonzero(~fixed)
    t0 = time.perf_counter()
    Kf = K.tocsr()[free][:, free].tocsc()
    Gf = KG.tocsr()[free][:, free].tocsc()
    lam = spla.eigsh(Kf, k=modes, M=-Gf, sigma=1.0, which="LM", mode="buckling",
                     return_eigenvectors=False)
    t_eig = time.perf_counter() - t0
    lam = np.sort(lam)
    print(f"baseline eigensolution {t_eig:.3f} s; load factors {np.array2string(lam, precision=5)}")


if __name__ == "__main__":
    main(sys.argv[1], *(int(x) for x in sys.argv[2:3]), *(float(x) for x in sys.argv[3:4]))
