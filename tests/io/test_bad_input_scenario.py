"""Bad-input corpus for scenario files, run through the real CLI (``fringe probe``).

Every case: exit code 2, one ``fringe: error:`` line naming the file and the key path,
no traceback, nothing on stdout, and the previous output file untouched (no temporary
files left beside it). Cases are edits of one small valid scenario, so each file differs
from a good one by exactly the fault under test.
"""

from __future__ import annotations

import os

import numpy as np
import pytest

from tests.conftest import SMALL_SCENARIO_TOML

OLD_OUTPUT = b"previous results: must survive every failed run\n"


def edit(*pairs: tuple[str, str]) -> str:
    """SMALL_SCENARIO_TOML with each (old, new) replaced exactly once."""
    text = SMALL_SCENARIO_TOML
    for old, new in pairs:
        assert text.count(old) == 1, old
        text = text.replace(old, new)
    return text


MAGNET_HEAD = '[[magnet]]\nname = "m1"\ncenter_m = [0.0, 0.0, 1.0]\n'

# (id, scenario text, substrings the error message must contain)
CORPUS: list[tuple[str, str, list[str]]] = [
    # -- syntax ------------------------------------------------------------------------
    ("malformed-header", edit(("[[magnet]]\n", "[[magnet]\n")), ["not valid TOML", "line 4"]),
    ("unterminated-string", edit(('name = "m1"', 'name = "m1')), ["not valid TOML"]),
    ("duplicate-key", edit(("turns = 1000", "turns = 1000\n  turns = 2")), ["not valid TOML"]),
    ("nested-too-deep", "a = " + "[" * 3000 + "]" * 3000 + "\n", ["nested too deeply"]),
    # -- missing and unknown keys (with the "did you mean" the user needs) ---------------
    ("typo-required-key", edit(("current_A =", "curent_A =")),
     ["`magnet[0].coil[0].current_A` is missing", "found `magnet[0].coil[0].curent_A`",
      "did you mean `magnet[0].coil[0].current_A`"]),
    ("typo-optional-key", edit(("axis =", "axsi =")),
     ["`magnet[0].axsi` is not a known key", "did you mean `magnet[0].axis`"]),
    ("typo-site-key", edit(('name = "small', 'nmae = "small')),
     ["`site.nmae` is not a known key", "did you mean `site.name`"]),
    ("typo-top-level", edit(("[[magnet]]", "[[magnets]]"), ("[[magnet.coil]]", "[[magnets.coil]]")),
     ["`magnets` is not a known key", "did you mean `magnet`"]),
    ("unknown-key", edit(("turns = 1000", "turns = 1000\n  colour = 'blue'")),
     ["`magnet[0].coil[0].colour` is not a known key"]),
    ("missing-center", edit(("center_m = [0.0, 0.0, 1.0]\n", "")),
     ["`magnet[0].center_m` is missing"]),
    ("missing-name", edit(('name = "m1"\n', "")), ["`magnet[0].name` is missing"]),
    ("missing-coil", MAGNET_HEAD, ["`magnet[0].coil` is missing"]),
    ("empty-coil-list", MAGNET_HEAD + "coil = []\n", ["`magnet[0].coil` is missing"]),
    # -- wrong types ---------------------------------------------------------------------
    ("turns-string", edit(("turns = 1000", 'turns = "many"')),
     ["`magnet[0].coil[0].turns` must be a number", "'many'"]),
    ("turns-bool", edit(("turns = 1000", "turns = true")),
     ["`magnet[0].coil[0].turns` must be a number", "True"]),
    ("current-array", edit(("current_A = 100.0", "current_A = [100.0]")),
     ["`magnet[0].coil[0].current_A` must be a number"]),
    ("center-two-values", edit(("center_m = [0.0, 0.0, 1.0]", "center_m = [0.0, 1.0]")),
     ["`magnet[0].center_m` must be an array of 3 numbers"]),
    ("center-string", edit(("center_m = [0.0, 0.0, 1.0]", 'center_m = "origin"')),
     ["`magnet[0].center_m` must be an array of 3 numbers"]),
    ("axis-mixed", edit(("axis = [0, 0, 1]", 'axis = [0, 0, "z"]')),
     ["`magnet[0].axis` must be an array of 3 numbers"]),
    ("name-number", edit(('name = "m1"', "name = 5")),
     ["`magnet[0].name` must be a non-empty string"]),
    ("name-blank", edit(('name = "m1"', 'name = "  "')),
     ["`magnet[0].name` must be a non-empty string"]),
    ("coil-scalar", MAGNET_HEAD + "coil = 5\n", ["`magnet[0].coil` must be an array of tables"]),
    ("magnet-string", 'magnet = "big"\n', ["`magnet` must be an array of tables"]),
    ("site-scalar", edit(('[site]\nname = "small test site (invented)"\n', "site = 3\n")),
     ["`site` must be a table"]),
    ("coil-item-scalar", MAGNET_HEAD + "coil = [1, 2]\n", ["`magnet[0].coil[0]` must be a table"]),
    # -- NaN, inf and overflow -----------------------------------------------------------
    ("current-nan", edit(("current_A = 100.0", "current_A = nan")),
     ["`magnet[0].coil[0].current_A` must be a finite number", "nan"]),
    ("current-inf", edit(("current_A = 100.0", "current_A = -inf")),
     ["`magnet[0].coil[0].current_A` must be a finite number", "-inf"]),
    ("center-inf", edit(("center_m = [0.0, 0.0, 1.0]", "center_m = [inf, 0.0, 1.0]")),
     ["`magnet[0].center_m` must be an array of 3 finite numbers"]),
    ("magnet-section-misspelt", edit(("[[magnet]]\n", "[[magnets]]\n")),
     ["`magnets` is not a known key; did you mean `magnet`?"]),
    ("center-absurdly-far", edit(("center_m = [0.0, 0.0, 1.0]", "center_m = [1e200, 0.0, 1.0]")),
     ["`magnet[0].center_m` must be site coordinates within ±1e+08 m"]),
    ("turns-huge-int", edit(("turns = 1000", "turns = 1" + "0" * 400)),
     ["`magnet[0].coil[0].turns` must be a finite number", "…"]),
    ("field-overflow", edit(("current_A = 100.0", "current_A = 1e308")),
     ["`magnet[0].coil` must give a finite field", "inf"]),
    # -- sizes and geometry --------------------------------------------------------------
    ("r-inner-negative", edit(("r_inner_m = 0.30", "r_inner_m = -0.1")),
     ["`magnet[0].coil[0].r_inner_m` must be a number ≥ 0", "-0.1"]),
    ("r-outer-zero", edit(("r_inner_m = 0.30", "r_inner_m = 0.0"),
                          ("r_outer_m = 0.32", "r_outer_m = 0")),
     ["`magnet[0].coil[0].r_outer_m` must be a number > 0"]),
    ("turns-zero", edit(("turns = 1000", "turns = 0")),
     ["`magnet[0].coil[0].turns` must be a number > 0"]),
    ("turns-negative", edit(("turns = 1000", "turns = -5")),
     ["`magnet[0].coil[0].turns` must be a number > 0", "-5"]),
    ("r-inner-equals-outer", edit(("r_inner_m = 0.30", "r_inner_m = 0.32")),
     ["`magnet[0].coil[0].r_outer_m` must be greater than r_inner_m"]),
    ("r-inner-above-outer", edit(("r_inner_m = 0.30", "r_inner_m = 0.40")),
     ["`magnet[0].coil[0].r_outer_m` must be greater than r_inner_m (0.4)", "0.32"]),
    ("z-min-equals-max", edit(("z_min_m = -0.20", "z_min_m = 0.20")),
     ["`magnet[0].coil[0].z_max_m` must be greater than z_min_m"]),
    ("z-min-above-max", edit(("z_min_m = -0.20", "z_min_m = 0.50")),
     ["`magnet[0].coil[0].z_max_m` must be greater than z_min_m (0.5)"]),
    ("axis-zero", edit(("axis = [0, 0, 1]", "axis = [0, 0, 0]")),
     ["`magnet[0].axis` must be a non-zero vector"]),
    ("duplicate-magnet-names", SMALL_SCENARIO_TOML + SMALL_SCENARIO_TOML.split("[site]")[1]
     .split("\n", 2)[2], ["`magnet[1].name` must be unique among magnets", "'m1'"]),
    # -- empty sites ---------------------------------------------------------------------
    ("empty-file", "", ["`magnet` must list at least one magnet"]),
    ("site-table-only", '[site]\nname = "nothing here"\n',
     ["`magnet` must list at least one magnet"]),
    ("comments-only", "# nothing\n\n# at all\n", ["`magnet` must list at least one magnet"]),
]


DATASHEET = ('[[magnet]]\nname = "m1"\ncenter_m = [0.0, 0.0, 1.0]\n[magnet.datasheet]\n'
             'center_field_T = {b}\n{lines}')
LINE = "[[magnet.datasheet.line]]\nthreshold_mT = {t}\naxial_m = 4.0\nradial_m = 2.5\n"
QUENCH = '\n[[quench]]\nmagnet = "{m}"\n{he} = {v}\nroom_volume_m3 = 100.0\n'

# sections owned by other modules (data-sheet magnets, quench); each fails before any fit
CORPUS += [
    ("datasheet-threshold-above-centre", DATASHEET.format(b=1.5, lines=LINE.format(t=2000)),
     ["`magnet[0].datasheet.line[0].threshold_mT` must be below the centre field"]),
    ("datasheet-no-lines", DATASHEET.format(b=1.5, lines=""), ["`magnet[0].datasheet.line`"]),
    ("datasheet-200-T", DATASHEET.format(b=200, lines=LINE.format(t=0.5)),
     ["`magnet[0].datasheet.center_field_T` must be a number ≤", "200"]),
    ("datasheet-typo", DATASHEET.format(b=1.5, lines=LINE.format(t=0.5)).replace(
        "center_field_T", "centre_field_T"),
     ["`magnet[0].datasheet.center_field_T` is missing",
      "did you mean `magnet[0].datasheet.center_field_T`"]),
    ("datasheet-and-coils", SMALL_SCENARIO_TOML.replace(
        "  [[magnet.coil]]", "[magnet.datasheet]\ncenter_field_T = 1.5\n"
        + LINE.format(t=0.5) + "  [[magnet.coil]]"),
     ["`magnet[0].coil` must be absent when `magnet[0].datasheet` is given"]),
    ("quench-unknown-magnet", SMALL_SCENARIO_TOML + QUENCH.format(m="m2", he="helium_L", v=1.0),
     ["`quench[0].magnet` must be one of 'm1'", "'m2'"]),
    ("quench-negative-helium",
     SMALL_SCENARIO_TOML + QUENCH.format(m="m1", he="helium_L", v=-100.0),
     ["`quench[0].helium_L` must be a number > 0"]),
    ("quench-key-typo", SMALL_SCENARIO_TOML + QUENCH.format(m="m1", he="helium_l", v=100.0),
     ["`quench[0].helium_L` is missing", "did you mean `quench[0].helium_L`"]),
    ("quench-duplicate", SMALL_SCENARIO_TOML + 2 * QUENCH.format(m="m1", he="helium_L", v=1.0),
     ["`quench[1].magnet` must be unique"]),
]


def test_duplicate_case_really_has_two_magnets():
    # guard on the corpus itself: the duplicate-name case holds two [[magnet]] tables
    text = dict((c[0], c[1]) for c in CORPUS)["duplicate-magnet-names"]
    assert text.count("[[magnet]]") == 2 and text.count('name = "m1"') == 2


def assert_refused(code, out, err, expected, file_name, out_dir, before):
    """The common assertions of every bad-input case."""
    assert code == 2, err
    assert "Traceback" not in err
    assert out == ""
    assert err.startswith("fringe: error: "), err
    assert file_name in err
    for s in expected:
        assert s in err, f"{s!r} not in {err!r}"
    assert (out_dir / "field.npy").read_bytes() == OLD_OUTPUT
    assert sorted(os.listdir(out_dir)) == before, "a temporary or partial file was left"


@pytest.mark.parametrize("text,expected", [c[1:] for c in CORPUS], ids=[c[0] for c in CORPUS])
def test_bad_scenario_is_refused_with_key_path(text, expected, tmp_path, write_file, run_cli):
    scen = write_file(text, "bad_scenario.toml")
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    (out_dir / "field.npy").write_bytes(OLD_OUTPUT)
    before = sorted(os.listdir(out_dir))
    code, out, err = run_cli("probe", scen, "--at", 1, 0, 1, "--out", out_dir / "field.npy")
    assert_refused(code, out, err, expected, "bad_scenario.toml", out_dir, before)
    assert err.count("\n") == 1, "one message, one line"


# -- files that cannot be read ---------------------------------------------------------

def _prepare(tmp_path):
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    (out_dir / "field.npy").write_bytes(OLD_OUTPUT)
    return out_dir, sorted(os.listdir(out_dir))


def test_missing_file(tmp_path, run_cli):
    out_dir, before = _prepare(tmp_path)
    code, out, err = run_cli("probe", tmp_path / "nowhere.toml", "--at", 1, 0, 0,
                             "--out", out_dir / "field.npy")
    assert_refused(code, out, err, ["cannot read the scenario file", "No such file"],
                   "nowhere.toml", out_dir, before)


def test_directory_instead_of_file(tmp_path, run_cli):
    out_dir, before = _prepare(tmp_path)
    (tmp_path / "adir.toml").mkdir()
    code, out, err = run_cli("probe", tmp_path / "adir.toml", "--at", 1, 0, 0,
                             "--out", out_dir / "field.npy")
    assert_refused(code, out, err, ["cannot read the scenario file", "directory"],
                   "adir.toml", out_dir, before)


@pytest.mark.skipif(not hasattr(os, "geteuid") or os.geteuid() == 0,
                    reason="root reads files whatever their permission bits")
def test_unreadable_file(tmp_path, write_file, run_cli):
    out_dir, before = _prepare(tmp_path)
    scen = write_file(SMALL_SCENARIO_TOML, "locked.toml")
    scen.chmod(0)
    code, out, err = run_cli("probe", scen, "--at", 1, 0, 0, "--out", out_dir / "field.npy")
    assert_refused(code, out, err, ["cannot read the scenario file", "Permission denied"],
                   "locked.toml", out_dir, before)


@pytest.mark.parametrize("payload,byte", [
    (SMALL_SCENARIO_TOML.replace("invented", "inv\xe9nted").encode("latin-1"), None),
    (b"\xff\xfe" + SMALL_SCENARIO_TOML.encode("utf-16-le"), 0),
    (b"\x89PNG\r\n\x1a\n" + bytes(range(256)), 0),
], ids=["latin-1", "utf-16", "binary"])
def test_non_utf8_file(payload, byte, tmp_path, write_file, run_cli):
    out_dir, before = _prepare(tmp_path)
    scen = write_file(payload, "encoded.toml")
    try:
        payload.decode("utf-8")
        raise AssertionError("test payload must not be UTF-8")
    except UnicodeDecodeError as e:
        first_bad = e.start  # independent of fringe: Python's own decoder
    code, out, err = run_cli("probe", scen, "--at", 1, 0, 0, "--out", out_dir / "field.npy")
    assert_refused(code, out, err, ["must be UTF-8", f"byte {first_bad} "], "encoded.toml",
                   out_dir, before)
    if byte is not None:
        assert first_bad == byte


# -- inputs that must be accepted (the corpus must not refuse good files) ------------------

@pytest.mark.parametrize("transform", [
    lambda t: t.encode("utf-8"),
    lambda t: t.replace("\n", "\r\n").encode("utf-8"),
    lambda t: b"\xef\xbb\xbf" + t.encode("utf-8"),
], ids=["plain", "crlf", "utf8-bom"])
def test_good_file_variants_load_alike(transform, write_file, run_cli):
    """Windows line ends and a UTF-8 byte-order mark (Notepad) are not input errors."""
    from fringe.field.evaluate import field_at
    from fringe.io.scenario import load_site

    ref = load_site(write_file(SMALL_SCENARIO_TOML, "ref.toml"))
    scen = write_file(transform(SMALL_SCENARIO_TOML), "variant.toml")
    code, out, err = run_cli("probe", scen, "--at", 0, 0, 1, "--json")
    assert code == 0, err
    site = load_site(scen)
    assert site.magnets == ref.magnets
    p = np.array([[0.5, 0.2, 1.3]])
    assert np.array_equal(field_at(site, p), field_at(ref, p))  # same model, same numbers


# -- accepted input that must not hang ---------------------------------------------------

class _CpuTimeout(BaseException):  # not an Exception: the CLI must not turn it into exit 1
    pass


def _cpu_limited(fn, seconds: float):
    """Run ``fn()`` but raise _CpuTimeout after ``seconds`` of this process's CPU time."""
    import signal

    def handler(signum, frame):
        raise _CpuTimeout

    old = signal.signal(signal.SIGVTALRM, handler)
    signal.setitimer(signal.ITIMER_VIRTUAL, seconds)
    try:
        return fn()
    finally:
        signal.setitimer(signal.ITIMER_VIRTUAL, 0)
        signal.signal(signal.SIGVTALRM, old)


@pytest.mark.filterwarnings("ignore::RuntimeWarning")
def test_solid_coil_field_on_axis_finishes():
    from fringe.field.evaluate import field_at
    from fringe.model.magnet import Coil, Magnet
    from fringe.physics.energy import center_field_T

    m = Magnet("disc", (0.0, 0.0, 0.0), (0.0, 0.0, 1.0),
               (Coil(0.0, 0.1, -0.05, 0.05, 100.0, 10.0),))
    b = _cpu_limited(lambda: field_at(m, [0.0, 0.0, 0.0], method="direct"), 3.0)
    # closed-form centre field of a thick coil (Jackson Sec. 5.5); inside-winding
    # quadrature is of lower accuracy, so 1 % (common practice, no source)
    assert b[0, 2] == pytest.approx(center_field_T(m), rel=1e-2)


@pytest.mark.parametrize("coord", ["1e308", "1e200", "2e8"])
def test_absurdly_far_probe_point_finishes(coord, write_file, run_cli):
    # a point far beyond any site once overflowed the kernels to NaN and magpylib's
    # elliptic-integral iteration never ended; it must be refused at once, by the CLI
    # and by the public API alike
    scen = write_file(SMALL_SCENARIO_TOML, "s.toml")
    code, out, err = _cpu_limited(lambda: run_cli("probe", scen, "--at", coord, "0", "0"), 3.0)
    assert code == 2 and "Traceback" not in err
    assert "`--at` must be site coordinates within ±1e+08 m" in err
    from fringe import load_site
    from fringe.field.evaluate import field_at
    from fringe.model.errors import FringeInputError

    site = load_site(scen)
    with pytest.raises(FringeInputError, match="`points_m` must be site coordinates"):
        _cpu_limited(lambda: field_at(site, [[float(coord), 0.0, 0.0]]), 3.0)
