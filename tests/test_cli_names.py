"""One name per idea on the command line: contract tests over every subcommand's options.

Contracts checked (they hold for options added later too):

* every option that takes a value shows its unit-bearing placeholder (an explicit metavar, or
  its choices) and says its default in the help line;
* an option name used by several subcommands has the same placeholder in all of them, and the
  same default unless the difference is listed here with its reason (the help says it too);
* the laser caution appears exactly once in the help of each command that plans a measurement;
* renamed options keep working, announced in one line.
"""

from __future__ import annotations

import argparse
from collections import defaultdict

import pytest

from vibrapol.cli import build_parser, main

#: Options whose default differs between subcommands on purpose, with the reason (also given in
#: their help lines).
DIFFERENT_DEFAULTS = {
    "--geometry": "spectrum: 90° (liquids); sweep: 180° (oriented samples under a microscope)",
    "--width": "one-panel spectra fit a single column; polar sweeps need a double column",
    "--top": "spectrum labels 6 bands; sweep draws 4 polar panels",
    "--format": "each command has its own formats and default",
    "--output-dir": "demo writes a folder of its own; compute writes beside each structure",
    "--laser-nm": "match and rank need the laser explicitly to convert a wavelength axis; their "
    "computed intensities use 532 nm and say so",
}

#: Options that take a value but have no default to state (required, or a list to add to).
NO_DEFAULT = {"--vv", "--orientation", "--mixture", "--degeneracy", "--figure", "--rho-figure",
              "--table", "--sticks", "-o", "--output"}  # fmt: skip


def subcommands() -> dict[str, argparse.ArgumentParser]:
    parser = build_parser()
    sub = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    return dict(sub.choices)


def options(p: argparse.ArgumentParser) -> list[argparse.Action]:
    return [
        a
        for a in p._actions
        if a.option_strings
        and a.help is not argparse.SUPPRESS
        and not isinstance(a, argparse._HelpAction)
    ]


def takes_value(a: argparse.Action) -> bool:
    return a.nargs != 0 and not isinstance(a, argparse.BooleanOptionalAction)


def long_name(a: argparse.Action) -> str:
    return max(a.option_strings, key=len)


@pytest.mark.parametrize("name", sorted(subcommands()))
def test_every_value_option_shows_placeholder_and_default(name):
    missing = []
    for a in options(subcommands()[name]):
        if not takes_value(a) and not isinstance(a, argparse.BooleanOptionalAction):
            continue
        opt = long_name(a)
        if takes_value(a) and a.metavar is None and a.choices is None:
            missing.append(f"{opt}: no placeholder")
        if opt not in NO_DEFAULT and "default" not in (a.help or "").lower():
            missing.append(f"{opt}: help does not state the default")
    assert not missing, f"vibrapol {name}: " + "; ".join(missing)


def test_shared_option_names_mean_one_thing():
    seen: dict[str, dict[str, argparse.Action]] = defaultdict(dict)
    for name, p in subcommands().items():
        for a in options(p):
            seen[long_name(a)][name] = a
    problems = []
    for opt, by_cmd in seen.items():
        if len(by_cmd) < 2:
            continue
        metavars = {str(a.metavar) for a in by_cmd.values() if a.choices is None}
        if len(metavars) > 1:
            problems.append(f"{opt}: placeholders {sorted(metavars)}")
        defaults = {repr(a.default) for a in by_cmd.values()}
        if len(defaults) > 1 and opt not in DIFFERENT_DEFAULTS:
            problems.append(f"{opt}: defaults {sorted(defaults)} in {sorted(by_cmd)}")
        kinds = {type(a).__name__ for a in by_cmd.values()}
        if len(kinds) > 1:
            problems.append(f"{opt}: different kinds of option {sorted(kinds)}")
    assert not problems, "\n".join(problems)


def test_geometry_help_gives_the_reason_for_its_default():
    subs = subcommands()
    for name in ("spectrum", "sweep"):
        (a,) = [a for a in options(subs[name]) if "--geometry" in a.option_strings]
        assert "default" in a.help and ("usual" in a.help or "usually" in a.help)


@pytest.mark.parametrize("name", ["spectrum", "sweep", "match", "rank", "demo"])
def test_laser_caution_appears_once_per_command(name):
    text = subcommands()[name].format_help()
    assert text.count("injure eyes and skin") == 1, text


@pytest.mark.parametrize(
    ("argv", "new"),
    [
        (["spectrum", "x.modes.json", "--labels", "3"], "--top"),
        (["compute", "x.xyz", "--no-symmetry"], "--no-use-symmetry"),
    ],
)
def test_renamed_options_still_work_and_say_so(argv, new, capsys):
    args = build_parser().parse_args(argv)
    err = capsys.readouterr().err
    assert f"is now called {new}" in err and err.count("\n") == 1
    if new == "--top":
        assert args.top == 3
    else:
        assert args.use_symmetry is False


def test_match_scale_takes_only_a_factor(capsys):
    # --scale means one thing everywhere: a fixed factor.  'auto' (the old spelling of the
    # fitted default) is accepted with a note; anything else that is not a number is refused.
    args = build_parser().parse_args(["match", "x.modes.json", "--vv", "v.txt", "--scale", "auto"])
    assert args.scale is None and "--scale auto is the default" in capsys.readouterr().err
    assert main(["match", "x.modes.json", "--vv", "v.txt", "--scale", "-1"]) == 2
    assert "must be a positive number" in capsys.readouterr().err
