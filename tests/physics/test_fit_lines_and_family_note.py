"""`fringe fit` takes several lines (`--line`), and a fit whose family follows from a missing
warm bore says which family it chose, why, and how to choose another."""

from __future__ import annotations

import pytest

from fringe.cli.main import build_parser
from fringe.model.errors import ScenarioError
from fringe.physics.fit import family_choice_note, fit_magnet


def _args(*argv):
    return build_parser().parse_args(["fit", *argv])


def test_line_option_is_repeatable_and_combines_with_the_single_line():
    from fringe.cli.fit import field_lines

    args = _args("--center-field-T", "1.5", "--radial-m", "2.5", "--axial-m", "4",
                 "--line", "1", "3.4", "2.1", "--line", "3", "2.5", "1.6")
    lines = field_lines(args)
    assert [(ln.threshold_T, ln.axial_m, ln.radial_m) for ln in lines] == [
        (5e-4, 4.0, 2.5), (1e-3, 3.4, 2.1), (3e-3, 2.5, 1.6)]
    only = field_lines(_args("--center-field-T", "1.5", "--line", "0.5", "4", "2.5"))
    assert [(ln.threshold_T, ln.axial_m, ln.radial_m) for ln in only] == [(5e-4, 4.0, 2.5)]


@pytest.mark.parametrize("argv,expected", [
    ((), "at least one field line"),
    (("--radial-m", "2.5"), "go together"),
    (("--line", "0.5", "4", "-2.5"), "`--line` #1 `RADIAL_m` must be a positive"),
    (("--line", "2000", "4", "2.5"), "below the centre field"),
    (("--radial-m", "2.5", "--axial-m", "4", "--line", "0.5", "3", "2"), "own level"),
])
def test_bad_lines_are_refused_naming_the_option(argv, expected):
    from fringe.cli.fit import field_lines

    with pytest.raises(ScenarioError, match=expected.replace("(", r"\(")):
        field_lines(_args("--center-field-T", "1.5", *argv))


def test_fit_cli_with_two_lines_reproduces_both(run_cli):
    # invented for the test, typical order of magnitude of a shielded 1.5 T data sheet
    code, out, err = run_cli("fit", "--center-field-T", "1.5", "--bore-m", "0.6",
                             "--line", "0.5", "4.0", "2.5", "--line", "1", "3.4", "2.1")
    assert code == 0, err
    assert "0.5 mT line 4 m axial x 2.5 m radial; 1 mT line 3.4 m axial x 2.1 m radial" in out
    assert "note:" not in err  # a bore was given: nothing was assumed


def test_family_from_a_missing_bore_is_named_with_the_reason_and_the_way_out(run_cli):
    """The issue's case: unshielded 1.5 T, 0.5 mT line 4.5 m x 3.5 m, no bore."""
    code, out, err = run_cli("fit", "--center-field-T", "1.5", "--radial-m", "3.5",
                             "--axial-m", "4.5", "--unshielded")
    assert code == 0, err
    assert "fringe: note: no warm bore given" in err
    assert "unshielded lab family" in err and "`--bore-m`" in err
    assert "tried first" in err  # the reason: whole-body did not reproduce the lines
    assert "# NOTE: no warm bore given" in out


def test_library_note_names_the_parameter_and_is_not_a_warning():
    # invented for the test, typical order of magnitude (shielded 1.5 T whole-body)
    res = fit_magnet(1.5, [(5e-4, 4.0, 2.5)], shielded=True)  # filterwarnings=error
    assert res.family == "shielded_whole_body"
    assert len(res.notes) == 1 and "`bore_m`" in res.notes[0]
    assert "shielded whole-body family" in res.notes[0]
    assert not fit_magnet(1.5, [(5e-4, 4.0, 2.5)], shielded=True, bore_m=0.6).notes


def test_note_text_for_each_reason():
    note = family_choice_note("unshielded_lab", ("unshielded_whole_body", "unshielded_lab"))
    assert "54 mm warm bore assumed" in note and "unshielded whole-body family" in note
    note = family_choice_note("shielded_whole_body", ("shielded_whole_body",), "warm_bore_m")
    assert "`warm_bore_m`" in note and "0.6 m warm bore assumed" in note


def test_scenario_datasheet_without_bore_says_so_in_the_description(write_file):
    from fringe.io.scenario import load_site

    path = write_file("""\
[site]
name = "fit note test (invented)"

[[magnet]]
name = "scanner"
center_m = [0.0, 0.0, 1.2]
axis = [1, 0, 0]
  [magnet.datasheet]
  center_field_T = 1.5
    [[magnet.datasheet.line]]
    threshold_mT = 0.5
    axial_m = 4.0
    radial_m = 2.5
""")
    site = load_site(path)
    desc = site.magnets[0].description
    assert "Note: no warm bore given (`warm_bore_m`)" in desc
