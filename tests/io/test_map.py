"""3-D maps: grid layout, .npz and VTK .vti writers, dask path and the ``fringe map`` command."""

from __future__ import annotations

import tracemalloc
import xml.etree.ElementTree as ET
from importlib import resources

import numpy as np
import pytest

from fringe import Coil, Magnet
from fringe.cli.main import main
from fringe.field.evaluate import field_at
from fringe.field.grid import Grid, grid_from_box, grid_points, map_blocks, map_fast_model
from fringe.io.gridmap import read_vti, scheduled_blocks, write_map
from fringe.model.constants import ADVISORY_NOTICE
from fringe.model.errors import ArgumentError, FringeInputError


def small_magnet() -> Magnet:
    """Invented small solenoid (keeps the cached model cheap to build)."""
    return Magnet("lab", (0.0, 0.0, 0.0), (0.0, 0.0, 1.0),
                  (Coil(0.05, 0.06, -0.1, 0.1, 2000, 5.0),))


@pytest.fixture(scope="module")
def demo_path():
    with resources.as_file(resources.files("fringe") / "data" / "demo_site.toml") as p:
        yield str(p)


def test_grid_from_box_counts_nodes_and_includes_both_corners():
    # common practice, no source: nodes at x0, x0+s, …, up to x1 inclusive.
    g = grid_from_box((0, -1, 2, 1.0, 1.0, 2.0), 0.25)
    assert g.shape_xyz == (5, 9, 1)
    assert g.n_points == 45
    pts = grid_points(g, 0, g.n_points)
    assert np.allclose(pts[0], [0, -1, 2]) and np.allclose(pts[-1], [1.0, 1.0, 2.0])
    assert np.allclose(pts[1] - pts[0], [0.25, 0, 0])          # x fastest (VTK order)
    assert np.allclose(pts[5] - pts[0], [0, 0.25, 0])


@pytest.mark.parametrize("box, step, text", [
    ((0, 0, 0, -1, 1, 1), 0.1, "`box_m` must be a box with X1 ≥ X0"),
    ((0, 0, 0, 1, 1), 0.1, "`box_m` must be six finite numbers"),
    ((0, 0, 0, 1, 1, 1), 0.0, "`step_m` must be a positive number of metres; got 0.0"),
])
def test_bad_boxes_are_refused_with_one_message_form(box, step, text):
    # common practice, no source: message form "`key` must be …; got …".
    with pytest.raises(FringeInputError, match=text):
        grid_from_box(box, step)


def test_vti_is_valid_xml_image_data_with_the_field(tmp_path):
    # Source: VTK File Formats (Kitware), "XML File Formats", ImageData: WholeExtent,
    # Origin, Spacing; binary DataArray = base64 of a UInt64 byte count then the data.
    m = small_magnet()
    g = grid_from_box((-0.3, -0.2, -0.25, 0.3, 0.2, 0.35), 0.05)
    out = tmp_path / "m.vti"
    info = write_map(m, g, out, block_points=77)           # many blocks, odd sizes
    root = ET.parse(out).getroot()
    assert root.tag == "VTKFile" and root.get("type") == "ImageData"
    assert root.get("header_type") == "UInt64" and root.get("byte_order") == "LittleEndian"
    img = root.find("ImageData")
    nx, ny, nz = g.shape_xyz
    assert img.get("WholeExtent") == f"0 {nx - 1} 0 {ny - 1} 0 {nz - 1}"
    names = {a.get("Name"): a for a in img.iter("DataArray")}
    assert set(names) == {"B_T", "B_abs_T"} and names["B_T"].get("NumberOfComponents") == "3"
    back = read_vti(out)
    assert np.allclose(back["origin_m"], g.origin_m) and np.allclose(back["spacing_m"], 0.05)
    ref = field_at(m, grid_points(g, 0, g.n_points),
                   fast_model=map_fast_model(g)).reshape(nz, ny, nx, 3)
    # float32 storage: 6e-8 relative rounding (IEEE 754 single precision)
    np.testing.assert_allclose(back["B_T"], ref, rtol=1e-6, atol=1e-6 * np.abs(ref).max())
    np.testing.assert_allclose(back["B_abs_T"], np.linalg.norm(ref, axis=-1), rtol=1e-6)
    assert info["n_points"] == g.n_points
    assert "ADVISORY" in out.read_text()[:400]


def test_npz_holds_the_same_field_and_metadata(tmp_path):
    # common practice, no source: the two formats carry the same numbers.
    m = small_magnet()
    g = grid_from_box((-0.2, -0.2, 0.0, 0.2, 0.2, 0.1), 0.04)
    write_map(m, g, tmp_path / "a.npz", block_points=50, dtype=np.float64)
    write_map(m, g, tmp_path / "a.vti", block_points=50, dtype=np.float64)
    z = np.load(tmp_path / "a.npz")
    v = read_vti(tmp_path / "a.vti")
    assert z["B_T"].shape == (*g.shape_zyx, 3) and z["B_T"].dtype == np.float64
    np.testing.assert_array_equal(z["B_T"], v["B_T"])
    np.testing.assert_array_equal(z["B_abs_T"], v["B_abs_T"])
    assert tuple(z["shape_zyx"]) == g.shape_zyx and float(z["step_m"]) == 0.04
    assert str(z["advisory_notice"]) == ADVISORY_NOTICE


@pytest.mark.parametrize("scheduler", ["synchronous", "threads"])
def test_dask_blocks_equal_the_plain_blocks(scheduler):
    # common practice, no source: dask.array map_blocks on the local scheduler computes
    # the same blocks, in the same order, as the plain numpy loop.
    pytest.importorskip("dask")
    m = small_magnet()
    g = grid_from_box((-0.3, -0.3, -0.3, 0.3, 0.3, 0.3), 0.1)
    plain = list(map_blocks(m, g, block_points=60))
    viadask = list(scheduled_blocks(m, g, block_points=60, scheduler=scheduler,
                                   parallel_blocks=3))
    assert [s for s, _ in plain] == [s for s, _ in viadask]
    for (_, a), (_, b) in zip(plain, viadask, strict=True):
        np.testing.assert_array_equal(a, b)


def test_unknown_scheduler_address_is_an_input_error():
    # common practice, no source: a bad address is the user's input, never a traceback.
    pytest.importorskip("dask")
    g = Grid((0.0, 0.0, 1.0), 0.1, (2, 2, 1))
    with pytest.raises(ArgumentError, match="^`scheduler` must be the address of a running"):
        list(scheduled_blocks(small_magnet(), g, scheduler="tcp://127.0.0.1:9"))


def test_map_memory_is_bounded_by_the_block_not_the_map(tmp_path):
    # common practice, no source: peak traced memory for a 4× larger map stays the same
    # (the arrays are streamed to disk block by block).
    from fringe.field.fast import prepare_models

    m = small_magnet()
    # build the model first: one point would not (a coil set stays on the direct sum until
    # 2·10⁴ points are asked of it), and with an empty disk cache the build then fell
    # inside the second, traced map
    prepare_models([m])

    def peak(n_side_z):
        g = Grid((0.5, 0.5, 0.5), 0.01, (60, 50, n_side_z))
        tracemalloc.start()
        write_map(m, g, tmp_path / "p.npz", block_points=10_000)
        _, pk = tracemalloc.get_traced_memory()
        tracemalloc.stop()
        return pk

    small, large = peak(5), peak(20)                       # 15 000 vs 60 000 points
    assert large < 1.3 * small + 2e5


def test_cli_map_writes_vti_with_progress_and_notice(tmp_path, demo_path, capsys):
    # common practice, no source: the command wires scenario → grid → file.
    out = tmp_path / "room.vti"
    code = main(["map", demo_path, "--box", "8", "7", "1", "9", "8", "1.4", "--step", "0.2",
                 "--out", str(out)])
    cap = capsys.readouterr()
    assert code == 0
    assert "100.0%" in cap.err and ADVISORY_NOTICE in cap.out
    assert read_vti(out)["B_T"].shape == (3, 6, 6, 3)


@pytest.mark.parametrize("extra, text", [
    (["--out", "x.png"], "`--out` must be a file name ending in .npz or .vti"),
    (["--out", "x.npz", "--step", "-1"], "`--step` must be a positive number"),
    (["--out", "x.npz", "--max-points", "10"], "`--box`/`--step` must give at most"),
])
def test_cli_map_bad_input_exits_2_and_writes_nothing(tmp_path, demo_path, capsys, extra,
                                                        text, monkeypatch):
    # common practice, no source: exit code 2 and one message; no file left behind.
    monkeypatch.chdir(tmp_path)
    args = ["map", demo_path, "--box", "0", "0", "0", "1", "1", "1", "--step", "0.5", *extra]
    assert main(args) == 2
    assert text in capsys.readouterr().err
    assert not list(tmp_path.iterdir())


def test_cli_map_through_dask_equals_the_plain_run(tmp_path, demo_path):
    # common practice, no source: `--scheduler threads` writes the same file contents.
    pytest.importorskip("dask")
    args = ["map", demo_path, "--box", "8", "7", "1", "9", "8", "1.4", "--step", "0.2",
            "--quiet", "--block-points", "50"]
    assert main([*args, "--out", str(tmp_path / "a.npz")]) == 0
    assert main([*args, "--out", str(tmp_path / "b.npz"), "--scheduler", "threads"]) == 0
    a, b = np.load(tmp_path / "a.npz"), np.load(tmp_path / "b.npz")
    np.testing.assert_array_equal(a["B_T"], b["B_T"])


def test_cli_map_unusable_scheduler_fails_before_writing(tmp_path, demo_path, capsys):
    # common practice, no source: a scheduler that cannot be used is reported at once,
    # exit 2, and no output file (or temporary) is left.
    pytest.importorskip("dask.distributed")
    out = tmp_path / "x.npz"
    code = main(["map", demo_path, "--box", "0", "0", "0", "1", "1", "1", "--step", "0.5",
                 "--out", str(out), "--scheduler", "tcp://127.0.0.1:9"])
    assert code == 2
    assert "`--scheduler` must be the address of a running dask scheduler" in (
        capsys.readouterr().err)
    assert not list(tmp_path.iterdir())


def test_grid_errors_name_the_key_given():
    # common practice, no source: the field layer names its Python arguments; a caller
    # (the command line) passes its own names for the box and the step.
    with pytest.raises(FringeInputError, match="`--box` must be a box"):
        grid_from_box((1, 0, 0, 0, 1, 1), 0.1, box_key="--box", step_key="--step")
    with pytest.raises(FringeInputError, match="`--step` must be a positive number"):
        grid_from_box((0, 0, 0, 1, 1, 1), -1.0, box_key="--box", step_key="--step")
