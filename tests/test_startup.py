"""Start-up: `ventset` with no arguments goes straight to the window (no command parser to build), and a
command still gets its parser and its one-line errors."""

from __future__ import annotations

import pytest

from ventset import cli


def test_no_arguments_open_the_window_without_building_the_parser(monkeypatch):
    def no_parser():
        raise AssertionError("the parser was built")

    opened = []
    monkeypatch.setattr(cli, "build_parser", no_parser)
    monkeypatch.setattr(cli, "_cmd_gui", lambda ns: opened.append(ns.command) or 0)
    assert cli.main([]) == 0
    assert opened == [None]


def test_the_window_path_keeps_the_one_line_errors(monkeypatch, capsys):
    from ventset.errors import DataError

    def broken(_ns):
        raise DataError("species.toml: field 'x' is missing")

    monkeypatch.setattr(cli, "_cmd_gui", broken)
    assert cli.main([]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "data file problem: species.toml" in err


@pytest.mark.parametrize("args", [["gui"], ["plan", "--species", "dog", "--mass", "20"]])
def test_a_command_still_goes_through_the_parser(monkeypatch, args):
    built = []
    real = cli.build_parser

    def counted():
        built.append(1)
        return real()

    monkeypatch.setattr(cli, "build_parser", counted)
    monkeypatch.setattr(cli, "_cmd_gui", lambda ns: 0)
    assert cli.main(args) == 0
    assert built == [1]  # once


def _modules_after(code: str) -> set[str]:
    import json
    import subprocess
    import sys

    out = subprocess.run([sys.executable, "-c", code + "\nimport sys, json; print(json.dumps(sorted(sys.modules)))"],
                         capture_output=True, text=True, check=True)
    return set(json.loads(out.stdout.splitlines()[-1]))


def test_building_the_parser_loads_no_command_s_model():
    loaded = _modules_after("from ventset.cli import build_parser; build_parser()")
    # Each of these is loaded by its own command when it runs, not to register the command.
    assert not loaded & {"ventset.validation", "ventset.validation_data", "ventset.aquatic.irrigation",
                         "ventset.aquatic.data", "ventset.cases", "ventset.titrate"}


def test_the_aquatic_package_still_offers_its_names():
    from ventset.aquatic import IrrigationRequest, irrigation_to_dict, plan_irrigation
    from ventset.aquatic.irrigation import plan_irrigation as direct

    assert plan_irrigation is direct and callable(irrigation_to_dict) and IrrigationRequest.__name__
    with pytest.raises(AttributeError):
        import ventset.aquatic

        ventset.aquatic.no_such_name  # noqa: B018
