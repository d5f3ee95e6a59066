"""First-order static solver (framebuckle.solver.static) against closed forms.

Reference: Gere & Goodno 2009, Mechanics of Materials; Roark's Formulas for Stress and Strain; Hibbeler, Structural Analysis (named beside each check).
"""

import math

import numpy as np
import pytest

from framebuckle.errors import ModelError
from framebuckle.model.model import make_frame
from framebuckle.solver.static import member_forces, self_weight, solve_static

E, G = 2.1e11, 8.1e10
A, IY, IZ, J = 5.38e-3, 8.36e-5, 6.04e-6, 2.0e-7


def line_frame(L, m, restraint_ends, along=(1.0, 0.0, 0.0), **kw):
    """A straight member of length L split into m cells, along a direction."""
    d = np.asarray(along, float) / np.linalg.norm(along)
    nodes = np.outer(np.linspace(0, L, m + 1), d)
    el = np.column_stack([np.arange(m), np.arange(1, m + 1)])
    r = np.zeros((m + 1, 6), bool)
    r[0] = restraint_ends[0]
    r[-1] = restraint_ends[1]
    props = dict(E=E, G=G, A=A, Iy=IY, Iz=IZ, J=J)
    props.update(kw)
    return make_frame(nodes, el, restraint=r, **props)


FIXED = [1] * 6
FREE = [0] * 6


def test_cantilever_tip_load():
    # Gere & Goodno 2009, Mechanics of Materials, 7th ed., table of beam deflections (appendix;
    # its letter from memory), cantilever with end load:
    # tip deflection P L^3 / (3 E I), tip rotation P L^2 / (2 E I), fixed-end moment P L.
    L, P = 4.0, 12e3
    fr = line_frame(L, 3, (FIXED, FREE))
    loads = np.zeros((4, 6))
    loads[-1, 2] = -P                       # down, bending about local y (Iy)
    loads[-1, 1] = 0.5 * P                  # sideways, bending about local z (Iz)
    res = solve_static(fr, loads)
    u = res.displacements[-1]
    assert u[2] == pytest.approx(-P * L ** 3 / (3 * E * IY), rel=1e-10)
    assert u[1] == pytest.approx(0.5 * P * L ** 3 / (3 * E * IZ), rel=1e-10)
    assert u[4] == pytest.approx(P * L ** 2 / (2 * E * IY), rel=1e-10)   # theta_y = -dw/dx
    # fixed-end moment and shear on the first cell (local = global here)
    f = res.forces
    assert f.My[0, 0] == pytest.approx(P * L, rel=1e-10)
    assert f.Mz[0, 0] == pytest.approx(0.5 * P * L, rel=1e-10)
    assert abs(f.Vz[0, 0]) == pytest.approx(P, rel=1e-10)
    assert np.allclose(f.N, 0.0, atol=1e-6 * P)
    # the reaction moment equals the end-moment the member applies to the support
    assert res.reactions[0, 4] == pytest.approx(-P * L, rel=1e-10)
    # moment varies linearly: zero at the tip
    assert abs(f.My[-1, 1]) < 1e-8 * P * L


@pytest.mark.parametrize("cells", [2, 4, 6])
def test_fixed_fixed_beam_udl(cells):
    # Young & Budynas 2002, Roark's Formulas for Stress and Strain, 7th ed., Table 8.1 (table
    # number from memory)
    # (both ends fixed, uniform load): midspan deflection w L^4 / (384 E I),
    # end moments w L^2 / 12, midspan moment w L^2 / 24.
    L, w = 9.0, 7.5e3
    fr = line_frame(L, cells, (FIXED, FIXED))
    q = np.zeros((cells, 3))
    q[:, 2] = -w
    res = solve_static(fr, udl=q)
    mid = cells // 2
    assert res.displacements[mid, 2] == pytest.approx(-w * L ** 4 / (384 * E * IY), rel=1e-9)
    f = res.forces
    assert abs(f.My[0, 0]) == pytest.approx(w * L ** 2 / 12, rel=1e-9)
    assert abs(f.My[-1, 1]) == pytest.approx(w * L ** 2 / 12, rel=1e-9)
    assert abs(f.My[mid - 1, 1]) == pytest.approx(w * L ** 2 / 24, rel=1e-9)
    # hogging at the supports, sagging at midspan: opposite signs
    assert f.My[0, 0] * f.My[mid - 1, 1] < 0
    # equilibrium: reactions carry the whole load, w L / 2 each (common practice)
    assert res.reactions[:, 2].sum() == pytest.approx(w * L, rel=1e-12)
    assert res.reactions[0, 2] == pytest.approx(w * L / 2, rel=1e-9)


def test_udl_on_inclined_member_equals_rotated_solution():
    # a global load on a member in an arbitrary direction: the local solution is the
    # closed form of test_fixed_fixed_beam_udl (Roark, Table 8.1) for the perpendicular part
    L, w = 6.0, 4e3
    d = np.array([1.0, 2.0, 0.5])
    fr = line_frame(L, 4, (FIXED, FIXED), along=d)
    res = solve_static(fr, udl=np.array([0.0, 0.0, -w]))
    e = d / np.linalg.norm(d)
    wp = w * math.sqrt(1 - e[2] ** 2)            # part of the load across the member
    wa = -w * e[2]                               # part along it (per length)
    M = np.hypot(res.forces.My[0, 0], res.forces.Mz[0, 0])
    assert M == pytest.approx(wp * L ** 2 / 12, rel=1e-9)
    # axial: a bar fixed at both ends under a uniform axial load wa (towards its start here)
    # has N = wa L / 2 at the start (compression) and -wa L / 2 at the end (common practice)
    assert wa < 0
    assert res.forces.N_ends[0, 0] == pytest.approx(wa * L / 2, rel=1e-9)
    assert res.forces.N_ends[-1, 1] == pytest.approx(-wa * L / 2, rel=1e-9)


def pratt_truss(a=3.0, h=2.5, P=40e3):
    """4-panel Pratt truss, 3 loads P at the interior bottom joints, pinned + roller."""
    bottom = [(i * a, 0.0, 0.0) for i in range(5)]          # B0..B4 -> 0..4
    top = [(i * a, 0.0, h) for i in (1, 2, 3)]              # T1..T3 -> 5..7
    nodes = np.array(bottom + top)
    B = lambda i: i
    T = lambda i: 4 + i
    members = {
        "bottom": [(B(0), B(1)), (B(1), B(2)), (B(2), B(3)), (B(3), B(4))],
        "top": [(T(1), T(2)), (T(2), T(3))],
        "end_diag": [(B(0), T(1)), (T(3), B(4))],
        "vert_side": [(B(1), T(1)), (B(3), T(3))],
        "vert_mid": [(B(2), T(2))],
        "diag": [(T(1), B(2)), (T(3), B(2))],
    }
    el, group = [], []
    for g, lst in members.items():
        el += lst
        group += [g] * len(lst)
    r = np.zeros((8, 6), bool)
    r[:, 1] = True                 # the truss stays in its plane
    r[B(0), [0, 2]] = True         # pin
    r[B(4), 2] = True              # roller
    fr = make_frame(nodes, np.array(el), E=E, G=G, A=2e-3, Iy=1, Iz=1, J=1, bar=np.ones(len(el)),
                    restraint=r)
    loads = np.zeros((8, 6))
    loads[[B(1), B(2), B(3)], 2] = -P
    return fr, loads, np.array(group)


def test_determinate_truss_method_of_joints():
    # Method of joints and sections, Hibbeler, Structural Analysis (8th ed. 2012), ch. 3 (chapter
    # number from memory); the closed forms below are worked out by hand for this truss:
    # reactions 1.5 P; bottom chord 1.5 P a / h (tension); top chord 2 P a / h (compression);
    # end diagonals 1.5 P d / h (compression); side verticals P (tension); middle vertical 0;
    # interior diagonals 0.5 P d / h (tension), d = sqrt(a^2 + h^2).
    a, h, P = 3.0, 2.5, 40e3
    fr, loads, group = pratt_truss(a, h, P)
    res = solve_static(fr, loads)
    N = res.axial
    d = math.hypot(a, h)
    expect = {"bottom": 1.5 * P * a / h, "top": -2 * P * a / h, "end_diag": -1.5 * P * d / h,
              "vert_side": P, "vert_mid": 0.0, "diag": 0.5 * P * d / h}
    for g, v in expect.items():
        np.testing.assert_allclose(N[group == g], v, rtol=1e-9, atol=1e-9 * P, err_msg=g)
    assert res.reactions[0, 2] == pytest.approx(1.5 * P, rel=1e-10)
    assert res.reactions[4, 2] == pytest.approx(1.5 * P, rel=1e-10)
    # every rotational DOF of the bar-only joints was restrained automatically
    assert res.constraints.n_auto == 8 * 3


def space_frame():
    """A small 3D frame: four columns, a beam grillage, a bracing bar, fixed and pinned bases."""
    pts = [(0, 0, 0), (5, 0, 0), (5, 4, 0), (0, 4, 0), (0, 0, 3.5), (5, 0, 3.5), (5, 4, 3.5), (0, 4, 3.5)]
    el = [(0, 4), (1, 5), (2, 6), (3, 7), (4, 5), (5, 6), (6, 7), (7, 4), (0, 5), (4, 6)]
    bar = np.zeros(len(el))
    bar[8:] = 1
    r = np.zeros((8, 6), bool)
    r[[0, 1], :] = True
    r[[2, 3], :3] = True
    return make_frame(np.array(pts, float), np.array(el), E=E, G=G, A=A, Iy=IY, Iz=IZ, J=J,
                      bar=bar, restraint=r)


def test_equilibrium_and_joint_balance_3d():
    # Global equilibrium: reactions + applied loads sum to zero force and moment; every joint
    # balances the end forces of its members with its nodal load (common practice).
    fr = space_frame()
    loads = np.zeros((8, 6))
    loads[4:, 2] = -30e3
    loads[5, 0] = 8e3
    loads[6, 1] = -5e3
    loads[7, 5] = 2e3                        # a torque about Z
    q = self_weight(fr, 7850.0)
    q[4:8, 1] += 1.5e3                       # a sideways line load on the beams
    res = solve_static(fr, loads, q)
    L = fr.lengths()
    total = loads[:, :3].sum(0) + (q * L[:, None]).sum(0)
    np.testing.assert_allclose(res.reactions[:, :3].sum(0), -total, rtol=1e-10, atol=1e-6)
    # moments about the origin: nodal loads, member loads at mid-length, reactions
    mid = 0.5 * (fr.nodes[fr.elements[:, 0]] + fr.nodes[fr.elements[:, 1]])
    m_app = (np.cross(fr.nodes, loads[:, :3]).sum(0) + loads[:, 3:].sum(0)
             + np.cross(mid, q * L[:, None]).sum(0))
    m_rea = np.cross(fr.nodes, res.reactions[:, :3]).sum(0) + res.reactions[:, 3:].sum(0)
    np.testing.assert_allclose(m_rea, -m_app, rtol=1e-9, atol=1e-6)
    # joint balance with the actual nodal loads (not the equivalent member loads)
    from framebuckle.mechanics.assemble import Assembler
    from framebuckle.mechanics.elements import element_dofs
    asm = Assembler.build(fr)
    fg = np.einsum("eji,ej->ei", asm.T, res.forces.local)
    joint = np.bincount(element_dofs(fr).ravel(), weights=fg.ravel(), minlength=fr.n_dofs).reshape(-1, 6)
    np.testing.assert_allclose(joint, loads + res.reactions, atol=1e-7 * np.abs(loads).max())
    # each element is in equilibrium with its own line load (force part)
    f = res.forces.local
    ql = np.einsum("eij,ej->ei", asm.T[:, :3, :3], q) * L[:, None]
    np.testing.assert_allclose(f[:, :3] + f[:, 6:9] + ql, 0.0, atol=1e-7 * np.abs(loads).max())


def test_member_forces_from_displacements_match_solution():
    # the public displacement -> force map reproduces the solver's forces (common practice)
    fr = space_frame()
    loads = np.zeros((8, 6))
    loads[4:, 2] = -20e3
    res = solve_static(fr, loads, self_weight(fr, 7850.0))
    again = member_forces(fr, res.displacements, self_weight(fr, 7850.0))
    np.testing.assert_allclose(again.local, res.forces.local, rtol=0, atol=1e-9)
    # columns under gravity: compression
    assert (again.N[:4] < 0).all()


def test_mechanism_is_refused():
    fr, loads, _ = pratt_truss()
    r = np.array(fr.restraint)
    r[0, 0] = False                            # no horizontal restraint: free to slide
    with pytest.raises(ModelError, match="mechanism"):
        solve_static(fr.replace(restraint=r), loads)



def test_mechanism_message_names_the_free_dofs():
    # Two-storey tower: four tubular legs pinned at their bases, every other member a bar.
    # The structure is stable except that each leg can spin about its own axis, so the only
    # free DOFs are twists (rz) of the legs (common practice). The error must name those
    # DOFs and no translations: SuperLU factors Pr A Pc = L U, so U[j, j] belongs to column
    # argsort(perm_c)[j] (scipy documentation of scipy.sparse.linalg.SuperLU).
    corners = [(1, 1), (-1, 1), (-1, -1), (1, -1)]
    nodes = np.array([(x, y, 3.0 * k) for k in range(3) for (x, y) in corners], float)
    el, bar = [], []
    for k in range(2):
        for i in range(4):
            j = (i + 1) % 4
            el += [(4 * k + i, 4 * k + 4 + i), (4 * k + i, 4 * k + 4 + j), (4 * k + j, 4 * k + 4 + i)]
            bar += [0, 1, 1]
    for k in (1, 2):
        el += [(4 * k + i, 4 * k + (i + 1) % 4) for i in range(4)] + [(4 * k, 4 * k + 2)]
        bar += [1] * 5
    r = np.zeros((len(nodes), 6), bool)
    r[:4, :3] = True
    fr = make_frame(nodes, np.array(el), E=E, G=G, A=A, Iy=IY, Iz=IY, J=2 * IY, bar=bar, restraint=r)
    loads = np.zeros((len(nodes), 6))
    loads[-4:, 2] = -1e4
    with pytest.raises(ModelError) as exc:
        solve_static(fr, loads)
    msg = str(exc.value)
    assert "(rz)" in msg and "rotate about their own axis" in msg
    for comp in ("ux", "uy", "uz", "rx", "ry"):
        assert comp not in msg.split("Probable cause")[0]
