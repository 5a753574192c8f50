"""Bad options of the other commands (energy, quench, fit, map, place).

Each case: exit code 2, one ``fringe: error:`` line naming the option, no traceback,
and any output the command was pointed at left untouched.
"""

from __future__ import annotations

import os

import pytest

from tests.io.test_bad_input_plan import PLAN_TOML

OLD = b"previous output\n"

# (id, argv after the scenario with {out} for an existing output path, substring)
CASES = [
    ("energy-magnet", ["energy", "{scen}", "--magnet", "nope"],
     "`--magnet` must be one of the site's magnets ('m1')"),
    ("energy-margin-negative", ["energy", "{scen}", "--envelope-margin-m", "-1"],
     "`--envelope-margin-m` must be"),
    ("energy-margin-nan", ["energy", "{scen}", "--envelope-margin-m", "nan"],
     "`--envelope-margin-m` must be"),
    ("energy-box-inverted", ["energy", "{scen}", "--box", "0", "0", "0", "-1", "1", "1"],
     "`--box` must be"),
    ("energy-levels-negative", ["energy", "{scen}", "--levels", "-1", "--maps", "{outdir}"],
     "`--levels` must be positive"),
    ("energy-levels-nan", ["energy", "{scen}", "--levels", "nan", "--maps", "{outdir}"],
     "`--levels` must be positive"),
    ("quench-no-inventory", ["quench", "{scen}", "--pdf", "{out}.pdf"], "`--helium-L` must be"),
    ("quench-helium-negative", ["quench", "{scen}", "--helium-L", "-5", "--room-volume-m3",
                                "100", "--pdf", "{out}.pdf"], "`--helium-L` must be"),
    ("quench-helium-nan", ["quench", "{scen}", "--helium-L", "nan", "--room-volume-m3", "100"],
     "`--helium-L` must be"),
    ("quench-room-zero", ["quench", "{scen}", "--helium-L", "100", "--room-volume-m3", "0"],
     "`--room-volume-m3` must be"),
    ("quench-temperature", ["quench", "{scen}", "--helium-L", "100", "--room-volume-m3", "100",
                            "--room-temperature-C", "-300"], "`--room-temperature-C` must be"),
    ("quench-pressure", ["quench", "{scen}", "--helium-L", "100", "--room-volume-m3", "100",
                         "--room-pressure-kPa", "0"], "`--room-pressure-kPa` must be"),
    ("quench-dump-negative", ["quench", "{scen}", "--helium-L", "100", "--room-volume-m3", "100",
                              "--dump-ohm", "-1"], "`--dump-ohm` must be"),
    ("quench-magnet", ["quench", "{scen}", "--magnet", "nope", "--helium-L", "100",
                       "--room-volume-m3", "100"], "`--magnet` must be one of"),
    ("quench-pdf-no-folder", ["quench", "{scen}", "--helium-L", "100", "--room-volume-m3", "100",
                              "--pdf", "{tmp}/no/such/x.pdf"], "does not exist"),
    ("fit-negative-field", ["fit", "--center-field-T", "-1", "--radial-m", "2", "--axial-m", "3",
                            "--out", "{out}.toml"], "`--center-field-T` must be"),
    ("fit-nan-field", ["fit", "--center-field-T", "nan", "--radial-m", "2", "--axial-m", "3"],
     "`--center-field-T` must be"),
    ("fit-zero-extent", ["fit", "--center-field-T", "1.5", "--radial-m", "0", "--axial-m", "3"],
     "`--radial-m` must be"),
    ("fit-threshold-above-centre", ["fit", "--center-field-T", "1.5", "--radial-m", "2",
                                    "--axial-m", "3", "--threshold-mT", "2000"],
     "`--threshold-mT` must be below the centre field"),
    ("map-step-zero", ["map", "{scen}", "--box", "0", "0", "0", "1", "1", "1", "--step", "0",
                       "--out", "{out}.npz"], "`--step` must be"),
    ("map-step-nan", ["map", "{scen}", "--box", "0", "0", "0", "1", "1", "1", "--step", "nan",
                      "--out", "{out}.npz"], "`--step` must be"),
    ("map-box-inverted", ["map", "{scen}", "--box", "1", "0", "0", "0", "1", "1", "--step", "0.1",
                          "--out", "{out}.npz"], "`--box` must be"),
    # the 10⁹-point grid: refused with the number of nodes
    ("map-absurd-grid", ["map", "{scen}", "--box", "0", "0", "0", "1000", "1000", "1000",
                         "--step", "0.001", "--out", "{out}.npz"], "got 1e+18"),
    ("map-suffix", ["map", "{scen}", "--box", "0", "0", "0", "1", "1", "1", "--step", "0.1",
                    "--out", "{out}.txt"], "`--out` must be"),
    ("map-block-points", ["map", "{scen}", "--box", "0", "0", "0", "1", "1", "1", "--step", "0.1",
                          "--out", "{out}.npz", "--block-points", "0"], "`--block-points` must be"),
    ("place-magnet", ["place", "{scen}", "--magnet", "nope", "--region", "magnet room",
                      "--out", "{outdir}"], "`--magnet` must be one of"),
    ("place-region", ["place", "{scen}", "--magnet", "m1", "--region", "nowhere",
                      "--out", "{outdir}"], "`--region` must be"),
    ("place-region-two-points", ["place", "{scen}", "--magnet", "m1", "--region", "0,0;1,1"],
     "`--region` must be"),
    ("place-angles", ["place", "{scen}", "--magnet", "m1", "--region", "magnet room",
                      "--angles", "abc"], "`--angles` must be"),
    ("place-threshold", ["place", "{scen}", "--magnet", "m1", "--region", "magnet room",
                         "--threshold-mT", "-1"], "`--threshold-mT` must be"),
]


@pytest.mark.parametrize("argv,expected", [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_bad_command_options(argv, expected, tmp_path, write_file, run_cli):
    scen = write_file(PLAN_TOML, "site.toml")
    out = tmp_path / "result"
    outdir = tmp_path / "outdir"
    outdir.mkdir()
    (outdir / "old.txt").write_bytes(OLD)
    for suffix in (".pdf", ".toml", ".npz", ".txt"):
        out.with_suffix(suffix).write_bytes(OLD)
    before = sorted(os.listdir(tmp_path))
    code, stdout, err = run_cli(*[a.format(scen=scen, out=out, outdir=outdir, tmp=tmp_path)
                                  for a in argv])
    assert code == 2, err
    assert "Traceback" not in err
    assert "fringe: error: " in err and err.count("fringe: error:") == 1, err
    assert expected in err, err
    assert sorted(os.listdir(tmp_path)) == before  # nothing new, no temporaries
    for suffix in (".pdf", ".toml", ".npz", ".txt"):
        assert out.with_suffix(suffix).read_bytes() == OLD
    assert os.listdir(outdir) == ["old.txt"] and (outdir / "old.txt").read_bytes() == OLD


# -- absurd values that are accepted silently: pinned until they warn or refuse -------------

def test_absurd_quench_inputs_are_flagged(write_file, run_cli):
    import warnings

    scen = write_file(PLAN_TOML, "site.toml")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        code, out, err = run_cli("quench", scen, "--helium-L", "1e300",
                                 "--room-volume-m3", "1e-300")
    assert not [w for w in caught if issubclass(w.category, RuntimeWarning)]
    assert code == 2 or "fringe: warning:" in err


def test_implausible_fit_field_names_the_option(run_cli):
    code, out, err = run_cli("fit", "--center-field-T", "200", "--radial-m", "2", "--axial-m", "3")
    assert code == 2 and "Traceback" not in err
    assert "`--center-field-T`" in err


def test_fit_out_of_range_warns_with_the_numbers(run_cli):
    """Data-sheet numbers no solenoid can give are fitted with a warning, not silently."""
    code, out, err = run_cli("fit", "--center-field-T", "1.5", "--radial-m", "50",
                             "--axial-m", "0.1")
    assert code == 0 and "Traceback" not in err
    assert "fringe: warning:" in err
    assert "0.002" in err  # the axial/radial ratio 0.1/50 is named
