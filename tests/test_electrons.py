"""The [electrons] section: core and valence parsed, checked against Z, written back (docs/config.md)."""

import pytest

from relbasis.cli import main
from relbasis.config import Config, from_dict, load
from relbasis.electrons import SHORTHANDS, Electrons, Subshell, parse_electrons
from relbasis.errors import ConfigError, InputError
from relbasis.solver import as_config


def electrons(core, valence=None, Z=118):
    data = {"core": core} if valence is None else {"core": core, "valence": valence}
    return parse_electrons(data, Z)


# Electrons of the noble gases, common practice.
@pytest.mark.parametrize("shorthand,count", [("[He]", 2), ("[Ne]", 10), ("[Ar]", 18), ("[Kr]", 36),
                                             ("[Xe]", 54), ("[Rn]", 86), ("[Og]", 118)])
def test_shorthands_hold_the_noble_gas_electrons(shorthand, count):
    e = electrons(shorthand)
    assert e.core_electrons == e.electrons == count and e.charge(count) == 0


@pytest.mark.parametrize("shorthand,explicit", [
    ("[He]", "1s1/2"),
    ("[Ne]", "1s1/2 2s1/2 2p1/2 2p3/2"),
    ("[Ne]", "1s2 2s2 2p6"),
    ("[Ne]", "2p3/2(4) 1s1/2(2) 2p1/2 2s2"),
    ("[Ar]", "[Ne] 3s2 3p1/2 3p3/2"),
    ("[Kr]", "[Ar] 3d3/2 3d5/2 4s2 4p6"),
    ("[Xe]", "[Kr] 4d10 5s2 5p6"),
])
def test_explicit_lists_equal_the_shorthands(shorthand, explicit):
    assert electrons(explicit) == electrons(shorthand)


def test_hg_like_core_and_the_subshell_record():
    e = from_dict({"ion": {"Z": 80}, "electrons": {"core": "[Xe] 4f14 5d10"}}).electrons
    assert e.core_electrons == 78 and e.charge(80) == 2 and e.valence is None
    assert e.count(-1) == 5 and e.count(2) == 3 and e.count(3) == e.count(-4) == 1  # 1s..5s; 3d..5d; 4f
    assert e.kappas == (-4, -3, -2, -1, 1, 2, 3)
    f = Subshell(4, 3)  # 4f5/2
    assert (f.label, f.l, f.j2, f.occupancy) == ("4f5/2", 3, 5, 6)


def test_canonical_order_is_n_then_l_then_j():
    e = electrons("3s2 2p3/2 1s1/2 2p1/2 2s1/2")
    assert [s.label for s in e.core] == ["1s1/2", "2s1/2", "2p1/2", "2p3/2", "3s1/2"]
    assert [s.label for s in Electrons((Subshell(2, -1), Subshell(1, -1))).core] == ["1s1/2", "2s1/2"]


def test_valence_electron_counts_and_charge():
    e = from_dict({"ion": {"Z": 55}, "electrons": {"core": "[Xe]", "valence": "6s1/2"}}).electrons
    assert e.electrons == 55 and e.charge(55) == 0 and e.valence == Subshell(6, -1)
    assert e.count(-1) == 5  # 1s..5s: the valence subshell is not part of the core


@pytest.mark.parametrize("data,Z,needles", [
    ({"core": "[He] 2s2 2p5"}, 10, ["'2p5'", "open shell", "2(2l+1) = 6"]),
    ({"core": "[He] 2s2 2p3/2(3)"}, 10, ["'2p3/2(3)'", "open subshell", "2j+1 = 4"]),
    ({"core": "4f5/2(5)"}, 80, ["'4f5/2(5)'", "2j+1 = 6"]),
    ({"core": "[Ne] 2p3/2"}, 10, ["'2p3/2'", "already in '[Ne]'", "once"]),
    ({"core": "1s2 1s1/2"}, 10, ["'1s1/2'", "once"]),
    ({"core": "2s2 2s2"}, 10, ["'2s2'", "once"]),
    ({"core": "1s2 2d5/2"}, 10, ["'2d5/2'", "n >= l + 1"]),
    ({"core": "1p1/2"}, 10, ["'1p1/2'", "n >= l + 1"]),
    ({"core": "2p5/2"}, 10, ["'2p5/2'", "j = l +- 1/2"]),
    ({"core": "2d10"}, 10, ["'2d10'", "n >= 3"]),
    ({"core": "[Zz]"}, 10, ["'[Zz]'", "valid: [He] [Ne] [Ar] [Kr] [Xe] [Rn]"]),
    ({"core": "[Ca]"}, 20, ["'[Ca]'", "noble-gas shorthand"]),
    ({"core": "2p"}, 10, ["'2p'", "'2p6'"]),
    ({"core": "2p3/2^4"}, 10, ["'2p3/2^4'", "'2p3/2(4)'"]),
    ({"core": ""}, 10, ["electrons.core", "at least one closed subshell", '"[He]"']),
    ({"core": "  "}, 10, ["at least one closed subshell"]),
    ({"core": ["[He]"]}, 10, ["electrons.core", "one string"]),
    ({"core": "[Ar]"}, 10, ["18 electrons", "Z = 10", "at most Z"]),
    ({"core": "[Ne]", "valence": "3s1/2"}, 10, ["electrons.valence", "11 > Z = 10", "at most Z"]),
    ({"core": "[He]"}, 0, ["more than Z = 0"]),
    ({"core": "[Ne]", "valence": "2p3/2"}, 11, ["electrons.valence", "2p3/2", "outside the core"]),
    ({"core": "[Ne]", "valence": "3s"}, 11, ["electrons.valence", "'3s'", "one subshell label"]),
    ({"core": "[Ne]", "valence": "3s1/2 4s1/2"}, 12, ["electrons.valence", "one subshell label"]),
    ({"core": "[Ne]", "valence": 3}, 12, ["electrons.valence", "one subshell label"]),
    ({"valence": "1s1/2"}, 10, ["electrons.core is missing", "valence needs a core"]),
    ({}, 10, ["electrons.core is missing"]),
    ({"core": "[He]", "valance": "2s1/2"}, 10, ["electrons.valance", "did you mean 'valence'", "core, valence"]),
])
def test_bad_electrons_are_one_line_config_errors(data, Z, needles):
    with pytest.raises(ConfigError) as err:
        from_dict({"ion": {"Z": Z}, "electrons": data})
    msg = str(err.value)
    assert "\n" not in msg and all(n in msg for n in needles), msg
    with pytest.raises(ConfigError) as direct:  # the same check behind the module's own parser
        parse_electrons(data, Z)
    assert str(direct.value) == msg


def test_section_errors_name_the_section():
    with pytest.raises(ConfigError, match=r"did you mean 'electrons'.*\[electrons\]"):
        from_dict({"ion": {"Z": 10}, "electron": {"core": "[He]"}})
    with pytest.raises(ConfigError, match=r"\[electrons\] must be a table"):
        from_dict({"ion": {"Z": 10}, "electrons": "[He]"})


@pytest.mark.parametrize("section", [{"core": "[Xe] 4f14 5d10"}, {"core": "[Xe]", "valence": "6s1/2"},
                                     {"core": "5p6 [Kr] 5s2 4d3/2 4d5/2(6)", "valence": "4f7/2"}])
def test_round_trip_through_to_dict(section):
    cfg = from_dict({"ion": {"Z": 80}, "electrons": section})
    out = cfg.to_dict()
    assert set(out["electrons"]) == set(section) and "[" not in out["electrons"]["core"]
    assert from_dict(out) == cfg and from_dict(out).to_dict() == out


def test_bare_nucleus_config_is_unchanged():
    cfg = from_dict({"ion": {"Z": 10}})
    assert cfg.electrons is None and list(cfg.to_dict()) == ["ion", "basis", "solve"]
    assert Config(cfg.ion, cfg.basis, cfg.solve) == cfg


def test_solve_overrides_merge_the_section():
    cfg = as_config(None, ion={"Z": 10}, electrons={"core": "[Ne]"})
    assert cfg.electrons == electrons("[Ne]")
    again = as_config(cfg, electrons={"valence": "3s1/2"}, ion={"Z": 11})
    assert again.electrons.electrons == 11 and again.electrons.valence.label == "3s1/2"


def test_resolve_keeps_the_electrons():
    from relbasis.config import resolve

    cfg = from_dict({"ion": {"Z": 10, "nucleus": "point"}, "electrons": {"core": "[He]"}})
    assert resolve(cfg)[0].electrons == cfg.electrons


def test_toml_file_loads(tmp_path):
    path = tmp_path / "cs.toml"
    path.write_text('[ion]\nZ = 55\n[electrons]\ncore = "[Xe]"\nvalence = "6s1/2"\n')
    e = load(path).electrons
    assert e.electrons == 55 and e.core_electrons == 54 and e.valence.label == "6s1/2"


def test_subshell_refuses_what_cannot_exist():
    for n, kappa in ((1, 1), (2, 0), (2, -3), (True, -1)):
        with pytest.raises(InputError):
            Subshell(n, kappa)


def test_every_shorthand_is_closed_and_nested():
    """Each shorthand from [Ne] on contains the one before it (the rows of docs/config.md)."""
    names = list(SHORTHANDS)
    for smaller, larger in zip(names, names[1:]):
        assert SHORTHANDS[larger].split()[0] == smaller
        assert set(electrons(smaller).core) < set(electrons(larger).core)


@pytest.mark.parametrize("text,needle", [
    ('[ion]\nZ = 10\n[electrons]\ncore = "[He] 2s2 2p5"\n', "'2p5'"),
    ('[ion]\nZ = 10\n[electrons]\ncore = "[Ar]"\n', "at most Z"),
    ('[ion]\nZ = 10\n[electrons]\ncore = "[He]"\nvalenc = "2s1/2"\n', "did you mean 'valence'"),
])
def test_cli_refuses_a_bad_section_with_exit_status_2(tmp_path, capsys, text, needle):
    cfg = tmp_path / "bad.toml"
    cfg.write_text(text)
    code = main(["levels", str(cfg)])
    out, err = capsys.readouterr()
    lines = err.strip().splitlines()
    assert code == 2 and out == "" and len(lines) == 1 and lines[0].startswith("error: ") and needle in lines[0]
