"""Our VTU encoder (framebuckle.io.vtu) read back by two independent readers.

References: the VTK XML file format (Kitware, "VTK File Formats", VTK User's Guide, 11th ed.,
2010) as read by meshio's VTU reader and by VTK's own XML reader through PyVista; the
same grid written by VTK's XML writer (PyVista) must read back to the same arrays.
"""

import meshio
import numpy as np
import pyvista as pv

from framebuckle.io.vtu import from_meshio, vtu_bytes


def _mesh():
    rng = np.random.default_rng(3)
    pts = rng.standard_normal((6, 3))
    cells = [("vertex", np.array([[0], [5]])), ("line", np.array([[0, 1], [1, 2], [2, 3], [3, 4]]))]
    point_data = {"restraint": (rng.random((6, 6)) > 0.5).astype(float),
                  "tag": np.arange(6, dtype=np.int32), 'odd "name" & <more>': rng.random(6)}
    cell_data = {"E": [np.full(2, 1.0), np.full(4, 210e9)],
                 "orientation": [rng.random((2, 3)), rng.random((4, 3))],
                 "bar": [np.array([0, 0], np.uint8), np.array([1, 0, 0, 1], np.uint8)],
                 "flag": [np.array([True, False]), np.array([True, True, False, False])]}
    return meshio.Mesh(pts, cells, point_data=point_data, cell_data=cell_data)


def test_meshio_and_pyvista_read_back_every_array(tmp_path):
    m = _mesh()
    g = from_meshio(m)
    g.field_data["load_factors.G"] = np.array([3.5, 4.25])
    g.field_data["case_names_utf8"] = np.frombuffer(b"G\0Q\0", np.uint8).copy()
    path = tmp_path / "ours.vtu"
    path.write_bytes(vtu_bytes(g))

    back = meshio.read(path)
    np.testing.assert_array_equal(back.points, m.points)
    assert [c.type for c in back.cells] == ["vertex", "line"]
    np.testing.assert_array_equal(back.cells[1].data, m.cells[1].data)
    for name, a in m.point_data.items():
        np.testing.assert_array_equal(back.point_data[name], a)
    for name, parts in m.cell_data.items():
        got = np.concatenate(back.cell_data[name])
        np.testing.assert_array_equal(got, np.concatenate(parts).astype(got.dtype))
    np.testing.assert_array_equal(back.field_data["load_factors.G"], [3.5, 4.25])

    grid = pv.read(path)                                 # VTK's own XML reader
    assert grid.n_cells == 6 and grid.n_points == 6
    np.testing.assert_array_equal(grid.cell_data["orientation"], np.concatenate(m.cell_data["orientation"]))
    np.testing.assert_array_equal(grid.point_data['odd "name" & <more>'], m.point_data['odd "name" & <more>'])
    np.testing.assert_array_equal(grid.field_data["case_names_utf8"], np.frombuffer(b"G\0Q\0", np.uint8))


def test_same_arrays_as_vtk_s_own_writer(tmp_path):
    m = _mesh()
    m.point_data.pop('odd "name" & <more>')             # VTK's writer does not escape names
    ours = tmp_path / "ours.vtu"
    ours.write_bytes(vtu_bytes(from_meshio(m)))
    ref = tmp_path / "vtk.vtu"
    pv.from_meshio(m).save(ref, binary=True)             # VTK's XML writer
    a, b = pv.read(ours), pv.read(ref)
    np.testing.assert_array_equal(a.points, b.points)
    np.testing.assert_array_equal(a.celltypes, b.celltypes)
    np.testing.assert_array_equal(a.cell_connectivity, b.cell_connectivity)
    for name in ("E", "orientation", "bar"):
        np.testing.assert_array_equal(a.cell_data[name], b.cell_data[name])
    for name in m.point_data:
        np.testing.assert_array_equal(a.point_data[name], b.point_data[name])


def test_input_arrays_are_not_changed():
    m = _mesh()
    before = m.points.copy()
    g = from_meshio(m)
    g.points = g.points + 1.0                            # as the imperfect mesh moves its points
    g.point_data["new"] = np.zeros(6)
    np.testing.assert_array_equal(m.points, before)
    assert "new" not in m.point_data
