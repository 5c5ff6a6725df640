"""Scenario files: every kind of bad scenario is reported with the key's path and line."""

import textwrap

import pytest
from fluxfunnel import InputError
from fluxfunnel._io import atomic_path, write_text_atomic
from fluxfunnel.scenario import ScenarioError, explain, load_scenario, parse_scenario

GOOD = textwrap.dedent(
    """\
    [system]
    name = "Vesper-7"
    kind = "black_hole"
    mass = "8 solMass"
    spin = 0.5

    [accretion]
    eddington_ratio = 0.05

    [environment]
    field = 1e-3
    """
)


def test_good_scenario_fills_defaults_and_converts_units():
    sc = parse_scenario(GOOD)
    # Source: IAU 2015 B3 nominal solar mass parameter / CODATA 2018 G -> M_sun = 1.98841e33 g.
    assert sc["system"]["mass"] == pytest.approx(8 * 1.98841e33, rel=1e-5)
    assert sc["disk"]["alpha"] == 0.02 and sc["turbulence"]["template"] == "magnetorotational"
    assert sc["accretion"]["mdot"] is None


def test_mdot_with_unit():
    text = GOOD.replace("eddington_ratio = 0.05", 'mdot = "1e-8 solMass / yr"')
    sc = parse_scenario(text)
    # Source: 1 M_sun/yr = 1.98841e33 g / 3.15576e7 s (Julian year) = 6.301e25 g/s.
    assert sc["accretion"]["mdot"] == pytest.approx(6.301e17, rel=1e-3)


@pytest.mark.parametrize(
    ("old", "new", "key", "line", "words"),
    [
        ('spin = 0.5', 'spn = 0.5', "system.spn", 5, "unknown key"),
        ('spin = 0.5', 'spin = "fast"', "system.spin", 5, "must be float"),
        ('spin = 0.5', 'spin = 1.5', "system.spin", 5, "[0, 1]"),
        ('mass = "8 solMass"', 'mass = -3.0', "system.mass", 4, "positive"),
        ('mass = "8 solMass"', 'mass = "8 km"', "system.mass", 4, "cannot be converted"),
        ('kind = "black_hole"', 'kind = "quasar"', "system.kind", 3, "one of"),
        ('field = 1e-3', 'feild = 1e-3', "environment.feild", 11, "unknown key"),
        ('[environment]', '[environs]', "environs", 10, "unknown table"),
        ('eddington_ratio = 0.05', 'eddington_ratio = 0.05\nmdot = 1e17', "accretion", 7, "exactly one"),
    ],
)
def test_bad_scenarios_name_key_and_line(old, new, key, line, words):
    text = GOOD.replace(old, new)
    assert text != GOOD
    with pytest.raises(ScenarioError) as info:
        parse_scenario(text, source="my.toml")
    err = info.value
    assert isinstance(err, InputError)
    assert err.key == key and err.line == line
    assert words in str(err) and f"my.toml:{line}:" in str(err)


def test_missing_required_and_syntax_error():
    with pytest.raises(ScenarioError, match="environment"):
        parse_scenario(GOOD.split("[environment]")[0])
    with pytest.raises(ScenarioError, match="not valid TOML") as info:
        parse_scenario(GOOD + "\n[disk\nalpha = 0.1\n")
    assert info.value.line == 13  # the unterminated table header


def test_load_scenario_file(tmp_path):
    p = tmp_path / "s.toml"
    p.write_text(GOOD.replace("[environment]", '[output]\nfolder = "res"\n\n[environment]'))
    sc = load_scenario(p)
    assert sc.output_folder == tmp_path / "res"
    with pytest.raises(ScenarioError, match="cannot read"):
        load_scenario(tmp_path / "missing.toml")
    assert "[system]" in explain() and "required" in explain()


def test_atomic_writes_leave_nothing_half_written(tmp_path):
    target = tmp_path / "out" / "report.txt"
    write_text_atomic(target, "first")
    with pytest.raises(RuntimeError), atomic_path(target) as tmp:
        tmp.write_text("half")
        raise RuntimeError("boom")
    assert target.read_text() == "first"
    assert sorted(p.name for p in target.parent.iterdir()) == ["report.txt"]
