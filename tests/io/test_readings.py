"""The readings file (fringe.io.readings): columns, units, and bad rows refused with the
file, the line and the column. The file format is the package's own (docs/survey.md);
these are checks of that contract (common practice, no source)."""

from __future__ import annotations

from importlib import resources

import numpy as np
import pytest

from fringe.io.readings import load_readings, parse_readings
from fringe.model.errors import FringeWarning, ScenarioError

GOOD = """\
# a comment line
label,x_m,y_m,z_m,B_mT,uncertainty_mT,note
A,1,2,3,0.5,0.01,"by the door, low"

B, 4, 5, 6, 1.25, , second
"""


def test_columns_are_read_in_SI_with_lines_and_defaults():
    r = parse_readings(GOOD, "r.csv")
    assert len(r) == 2
    np.testing.assert_allclose(r.points_m, [[1, 2, 3], [4, 5, 6]])
    np.testing.assert_allclose(r.field_T, [5e-4, 1.25e-3])  # mT → T
    assert r.uncertainty_T[0] == pytest.approx(1e-5)
    assert np.isnan(r.uncertainty_T[1])  # an empty optional cell: not given
    assert np.isnan(r.components_T).all()
    assert r.labels == ("A", "B") and r.notes == ("by the door, low", "second")
    assert r.lines == (3, 5)  # comments and blank lines counted
    assert r.source_file == "r.csv"


def test_label_defaults_and_three_axis_components():
    text = "x_m,y_m,z_m,B_mT,Bx_mT,By_mT,Bz_mT\n0,0,5,1.0,0.6,0,0.8\n"
    r = parse_readings(text)
    assert r.labels == ("R1",)
    np.testing.assert_allclose(r.components_T, [[6e-4, 0, 8e-4]])


@pytest.mark.parametrize("text, where", [
    ("x_m,y_m,z_m,B_mT\n1,2,3,abc\n", "line 2, column 4: `B_mT`"),
    ("x_m,y_m,z_m,B_mT\n1,2,3,-0.5\n", "line 2, column 4: `B_mT`"),
    ("x_m,y_m,z_m,B_mT\n1,2,3,0\n", "line 2, column 4: `B_mT`"),
    ("x_m,y_m,z_m,B_mT\n1,two,3,0.5\n", "line 2, column 2: `y_m`"),
    ("x_m,y_m,z_m,B_mT\n1,2,nan,0.5\n", "line 2, column 3: `z_m`"),
    ("x_m,y_m,z_m,B_mT\n1,2,3\n", "line 2: a row must have 4 cells"),
    ("x_m,y_m,z_m,B_mT,uncertainty_mT\n1,2,3,0.5,-1\n", "line 2, column 5: `uncertainty_mT`"),
    ("x_m,y_m,z_m,B_mT\n1,2,1e9,0.5\n", "line 2, column 3: `z_m`"),
    ("x_m,y_m,z_m,B_mT,Bx_mT,By_mT,Bz_mT\n1,2,3,0.5,0.1,,0.2\n", "line 2, column 6: `By_mT`"),
    ("x_m,y_m,z_m\n1,2,3\n", "missing B_mT"),
    ("x_m,y_m,z_m,B_mt\n1,2,3,0.5\n", "did you mean `B_mT`?"),
    ("x_m,y_m,z_m,B_mT,Bx_mT\n1,2,3,0.5,0.5\n", "come together"),
    ("x_m,y_m,z_m,B_mT,x_m\n1,2,3,0.5,1\n", "appears twice"),
    ("# only comments\n", "at least one reading"),
    ("x_m,y_m,z_m,B_mT\n", "at least one reading"),
])
def test_bad_rows_name_file_line_and_column(text, where):
    with pytest.raises(ScenarioError) as e:
        parse_readings(text, "survey.csv")
    assert str(e.value).startswith("survey.csv: ")
    assert where in str(e.value)


def test_duplicate_positions_warn_naming_both_lines():
    text = "x_m,y_m,z_m,B_mT\n1,2,3,0.5\n4,5,6,0.2\n1,2,3.0004,0.52\n"
    with pytest.warns(FringeWarning, match=r"line 2 \(R1\) and line 4 \(R3\)"):
        r = parse_readings(text, "d.csv")
    assert len(r) == 3  # both kept


def test_components_that_disagree_with_the_magnitude_warn():
    text = "x_m,y_m,z_m,B_mT,Bx_mT,By_mT,Bz_mT\n0,0,5,2.0,0.6,0,0.8\n"
    with pytest.warns(FringeWarning, match="components give 1 mT"):
        parse_readings(text)


def test_unreadable_and_non_utf8_files(tmp_path):
    with pytest.raises(ScenarioError, match="cannot read the readings file"):
        load_readings(tmp_path / "missing.csv")
    p = tmp_path / "latin.csv"
    p.write_bytes("x_m,y_m,z_m,B_mT\n1,2,3,0.5 \xb5T\n".encode("latin-1"))
    with pytest.raises(ScenarioError, match="UTF-8"):
        load_readings(p)


def test_the_shipped_demo_readings_parse():
    with resources.as_file(resources.files("fringe") / "data" / "demo_readings.csv") as p:
        r = load_readings(p)
    assert len(r) >= 20
    assert np.all(r.field_T > 0) and np.all(np.isfinite(r.uncertainty_T))
