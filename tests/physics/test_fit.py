"""Equivalent-coil fit to data-sheet numbers, its scenario form and `fringe fit`."""

from __future__ import annotations

import tomllib
import warnings

import numpy as np
import pytest
from scipy.optimize import brentq

from fringe.cli.main import main
from fringe.field.direct import magnet_field_local_T
from fringe.io.scenario import load_site, parse_site
from fringe.model.constants import ADVISORY_NOTICE
from fringe.model.errors import FringeWarning, ScenarioError
from fringe.physics.fit import FieldLine, check_request, fit_magnet


def _direct_extent_m(magnet, threshold_T, axial, guess_m):
    """Independent root-find: scipy brentq on the direct sum, bracket [0.6, 1.6]×guess."""
    def f(s):
        rho, z = (0.0, s) if axial else (s, 0.0)
        b = magnet_field_local_T(magnet, np.array([rho]), np.array([z]))
        return float(np.hypot(b[0][0], b[1][0])) - threshold_T
    return brentq(f, 0.6 * guess_m, 1.6 * guess_m, xtol=1e-5)


# Requests invented for the test, typical order of magnitude of public data sheets:
# (centre field T, shielded, warm bore m, 0.5 mT line axial m, radial m).
REQUESTS = [
    (1.5, True, 0.6, 4.0, 2.5),     # invented for the test, typical order of magnitude
    (3.0, True, 0.6, 5.0, 2.8),     # invented for the test, typical order of magnitude
    (1.5, False, 0.6, 10.0, 7.8),   # invented for the test, typical order of magnitude
    (3.0, False, 0.6, 12.5, 9.8),   # invented for the test, typical order of magnitude
    (9.4, True, 0.054, 1.5, 1.1),   # invented for the test, typical order of magnitude
]


@pytest.mark.parametrize("b0,shielded,bore,axial,radial", REQUESTS)
def test_fit_reproduces_realistic_requests(b0, shielded, bore, axial, radial):
    with warnings.catch_warnings():
        warnings.simplefilter("error", FringeWarning)  # a consistent request: no warning
        res = fit_magnet(b0, [(5e-4, axial, radial)], shielded=shielded, bore_m=bore)
    m = res.magnet
    # independent check: brentq on the direct current-sheet sum; tolerance from the issue
    assert _direct_extent_m(m, 5e-4, True, axial) == pytest.approx(axial, rel=0.02)
    assert _direct_extent_m(m, 5e-4, False, radial) == pytest.approx(radial, rel=0.02)
    # the reported extents are the same numbers (consistency, 1 cm)
    assert res.achieved[0].axial_m == pytest.approx(_direct_extent_m(m, 5e-4, True, axial),
                                                    abs=0.01)
    b_centre = magnet_field_local_T(m, np.array([0.0]), np.array([0.0]))[1][0]
    assert b_centre == pytest.approx(b0, rel=0.005)  # centre field, tolerance from the issue
    assert res.reproduces and not res.warnings
    assert "equivalent model fitted to data-sheet numbers" in m.description
    if shielded:  # the shield leaves a small fraction of the main coils' dipole
        main = sum(c.dipole_moment_Am2 for c in m.coils if c.current_A > 0)
        assert abs(res.moments_Am[1]) < 0.1 * main  # design intent, no source


def test_inconsistent_request_warns():
    # ratio 2.0 for an unshielded magnet: far from the dipole's 2^{1/3} (Jackson Eq. 5.56)
    with pytest.warns(FringeWarning) as rec:
        res = fit_magnet(1.5, [(5e-4, 10.0, 5.0)], shielded=False, bore_m=0.6)
    assert any("implausible for an unshielded" in str(w.message) for w in rec)
    assert not res.reproduces
    assert any("misses a requested extent" in w for w in res.warnings)


def test_request_checks_name_the_problem():
    # axial shorter than radial: no solenoid-type magnet does that (dipole ratio 2^{1/3})
    assert any("< 1" in w for w in check_request(1.5, [FieldLine(5e-4, 2.0, 2.5)], True))
    # stronger line reaching farther than a weaker one
    lines = [FieldLine(5e-4, 4.0, 2.5), FieldLine(1e-3, 4.5, 2.0)]
    assert any("farther" in w for w in check_request(1.5, lines, True))
    # a shielded magnet with a dipole-like ratio slightly above 2^{1/3} is accepted
    assert check_request(1.5, [FieldLine(5e-4, 4.0, 2.5)], True) == []


def test_minimum_dipole_bound():
    # thin loop of radius a at the centre: B0 = μ0 I/(2a), m = Iπa² (Jackson 5.57 and
    # Sec. 5.5), hence m = 2π B0 a³/μ0 exactly: the bound is attained by a single loop
    from fringe.model.constants import MU0_T_M_PER_A
    from fringe.physics.fit import minimum_dipole_moment_Am2
    a, current = 0.46, 1.0e6
    b0 = MU0_T_M_PER_A * current / (2 * a)
    assert minimum_dipole_moment_Am2(b0, a) == pytest.approx(current * np.pi * a**2, rel=1e-12)
    from fringe.physics.families import unshielded_whole_body
    m = unshielded_whole_body(1.5, 0.46, 0.9)
    assert m.dipole_moment_Am2 > minimum_dipole_moment_Am2(1.5, 0.46)  # bound holds
    w = check_request(1.5, [FieldLine(5e-4, 5.0, 4.0)], False, 0.46)
    assert any("is the magnet shielded" in x for x in w)


@pytest.mark.parametrize("shielded", [False, True])
def test_two_lines_of_a_family_member_are_recovered(shielded):
    # round trip (consistency): lines of an invented family member are reproduced
    from fringe.field.extents import threshold_extents_m
    from fringe.physics.families import shielded_whole_body, unshielded_whole_body
    truth = (shielded_whole_body(1.5, 0.46, 0.7, 1.0, 0.05) if shielded
             else unshielded_whole_body(1.5, 0.5, 1.0))
    lines = [(t, *threshold_extents_m(truth, t)) for t in (5e-4, 1e-3)]
    res = fit_magnet(1.5, lines, shielded=shielded, bore_m=0.6)
    assert res.max_residual < 0.02 and not res.warnings  # tolerance from the issue


def test_bad_numbers_are_errors():
    from fringe.model.errors import FringeInputError
    with pytest.raises(FringeInputError, match="`line\\[0\\].axial_m` must be"):
        fit_magnet(1.5, [(5e-4, -4.0, 2.5)])
    with pytest.raises(FringeInputError, match="`center_field_T` must be"):
        fit_magnet(0.0, [(5e-4, 4.0, 2.5)])


DATASHEET_SITE = """
[site]
name = "Invented data-sheet clinic (fictional)"

[[magnet]]
name = "scanner A"
center_m = [5.0, 4.0, 1.1]
axis = [1, 0, 0]

  [magnet.datasheet]
  center_field_T = 1.5
  shielded = false
  warm_bore_m = 0.6

    [[magnet.datasheet.line]]
    threshold_mT = 0.5
    axial_m = 10.0
    radial_m = 7.8
"""


def test_scenario_datasheet_magnet(tmp_path):
    p = tmp_path / "site.toml"
    p.write_text(DATASHEET_SITE)
    site = load_site(p)
    m = site.magnets[0]
    assert m.origin == "datasheet-fit"
    assert "Equivalent coil model fitted to data-sheet numbers" in m.description
    # placed on the site: along the axis (x) from the centre, |B| = 0.5 mT at 10 m
    from fringe.field.evaluate import field_at
    b = field_at(site, np.array([[5.0 + 10.0, 4.0, 1.1], [5.0, 4.0 + 7.8, 1.1]]))
    # 2 % in the extent is ~6 % in B (B ∝ r⁻³ far out); consistency with the fit
    assert np.linalg.norm(b, axis=1) == pytest.approx([5e-4, 5e-4], rel=0.06)


@pytest.mark.parametrize("edit,match", [
    (("threshold_mT = 0.5", "threshold_mT = 2000.0"), "threshold_mT` must be below"),
    (("    [[magnet.datasheet.line]]\n    threshold_mT = 0.5\n    axial_m = 10.0\n"
      "    radial_m = 7.8\n", ""), "at least one"),
    (("radial_m = 7.8", "radial_m = 7.8\n    radius_m = 1"), "radius_m` is not a known key"),
])
def test_scenario_datasheet_errors(edit, match):
    text = DATASHEET_SITE.replace(*edit)
    with pytest.raises(ScenarioError, match=match):
        parse_site(tomllib.loads(text), "site.toml")


def test_cli_fit_prints_loadable_block(tmp_path, capsys):
    out = tmp_path / "magnet.toml"
    rc = main(["fit", "--center-field-T", "1.5", "--radial-m", "7.8", "--axial-m", "10",
               "--unshielded", "--bore-m", "0.6", "--out", str(out)])
    text = capsys.readouterr().out
    assert rc == 0
    assert ADVISORY_NOTICE in text and "[[magnet]]" in text and "[[magnet.coil]]" in text
    assert "equivalent model fitted to data-sheet numbers" in text.lower()
    site = parse_site(tomllib.loads('[site]\nname = "t"\n' + out.read_text()), str(out))
    from fringe.field.extents import threshold_extents_m
    ax, rad = threshold_extents_m(site.magnets[0], 5e-4)
    assert (ax, rad) == pytest.approx((10.0, 7.8), rel=0.02)  # tolerance from the issue


def test_cli_fit_bad_input_exit_2(capsys):
    rc = main(["fit", "--center-field-T", "-1", "--radial-m", "2.5", "--axial-m", "4"])
    assert rc == 2
    assert "`--center-field-T` must be" in capsys.readouterr().err


def test_centre_field_implausible_for_the_family_warns_with_the_number():
    # issue 10: a magnet whose centre field is implausible for its family; whole-body MR
    # magnets are built up to about 11.7 T (from memory; fringe.physics.families.FAMILIES)
    from fringe.physics.families import FAMILIES

    with pytest.warns(FringeWarning) as rec:
        res = fit_magnet(20.0, [(5e-4, 9.0, 7.2)], shielded=False, bore_m=0.9)
    assert res.family == "unshielded_whole_body"
    lo, hi = FAMILIES[res.family].field_range_T
    assert any(f"a centre field of 20 T is implausible for the unshielded whole body family "
               f"(built for about {lo:g} to {hi:g} T)" in str(w.message) for w in rec)


def test_magnet_block_writer_escapes_and_keeps_whole_turns():
    # fringe.io.toml_out: one writer for `fringe fit` and `fringe place`; quotes and
    # backslashes in names survive, whole turns print as integers, the header comes first
    from fringe.io.toml_out import magnet_toml
    from fringe.model.magnet import Coil, Magnet

    m = Magnet('hall "A" \\ 1.5 T', (1.0, -0.0, 1.1), (0, 0, 1),
               (Coil(0.3, 0.32, -0.2, 0.2, 2180.0, 100.0),), description='a "quoted" model')
    block = magnet_toml(m, comments=["advisory"], coil_comments=["main coil"],
                        position_digits=4)
    assert block.startswith("[[magnet]]\n# advisory\n")
    assert "  turns = 2180\n" in block and "[[magnet.coil]]  # main coil" in block
    again = parse_site(tomllib.loads(block), "block.toml").magnets[0]
    assert again.name == m.name and again.description == m.description
    assert again.coils == m.coils and again.center_m == pytest.approx(m.center_m)
