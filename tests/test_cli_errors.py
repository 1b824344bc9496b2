"""How the command line treats errors: a user mistake is one line and exit 2, a bug is one line and exit 3 with the
traceback in a file, and no output option may name an input file (massmodel.cli.main, massmodel.cli.args)."""

from __future__ import annotations

import argparse
import re
from pathlib import Path

import pytest
import test_cli_core

from massmodel.cli import EXIT_BUG, EXIT_USAGE, build_parser, main
from massmodel.cli.args import check_outputs, output_file, output_folder
from massmodel.core.errors import InputError, NotFoundError, UsageError, UserError

car = test_cli_core.car  # the fixture of the core commands' tests (a small car model file)
run = test_cli_core.run


def test_user_error_types_stay_value_and_key_errors() -> None:
    # callers that catch ValueError / KeyError keep working; str() of a missing name is its text, not a repr
    assert issubclass(InputError, ValueError) and issubclass(InputError, UserError)
    assert issubclass(UsageError, ValueError) and issubclass(NotFoundError, KeyError)
    assert str(NotFoundError("no slot 'x'; slots: a")) == "no slot 'x'; slots: a"


def test_internal_error_is_exit_3_with_the_traceback_in_a_file(capsys, car, monkeypatch) -> None:
    import massmodel.cli.core as cli_core

    def broken(args: argparse.Namespace) -> None:
        return {}["a key the code forgot"]  # a bug: a KeyError that no user input explains

    monkeypatch.delenv("MASSMODEL_DEBUG", raising=False)
    monkeypatch.setattr(cli_core, "load_from_args", broken)
    code, out, err = run(capsys, "report", car)
    assert code == EXIT_BUG
    assert len(err.splitlines()) == 1
    m = re.fullmatch(r"massmodel report: internal error: KeyError: 'a key the code forgot' — please report it; "
                     r"the traceback is in (\S+)\n", err)
    assert m, err
    trace = Path(m.group(1)).read_text(encoding="utf-8")
    assert "Traceback (most recent call last)" in trace and "def broken" not in trace and "broken" in trace
    Path(m.group(1)).unlink()


def test_debug_variable_raises_the_internal_error(car, monkeypatch) -> None:
    import massmodel.cli.core as cli_core

    monkeypatch.setenv("MASSMODEL_DEBUG", "1")
    monkeypatch.setattr(cli_core, "load_from_args", lambda args: 1 / 0)
    with pytest.raises(ZeroDivisionError):
        main(["report", str(car)])


def test_os_error_on_a_named_file_is_a_user_error(capsys, car, tmp_path, monkeypatch) -> None:
    monkeypatch.delenv("MASSMODEL_DEBUG", raising=False)
    folder = tmp_path / "a folder"
    folder.mkdir()
    code, _, err = run(capsys, "report", car, "--json", folder)  # a folder where the JSON file should go
    assert code == EXIT_USAGE
    assert err.startswith("massmodel report: error: ") and str(folder) in err and len(err.splitlines()) == 1


def test_help_lists_the_exit_codes(capsys) -> None:
    with pytest.raises(SystemExit):
        build_parser().parse_args(["--help"])
    out = capsys.readouterr().out
    for line in ("0  ok", "1  the command ran and a check failed", "2  bad input", "3  internal error"):
        assert line in out


# --- outputs never replace inputs ---------------------------------------------------------------------------------


def _commands() -> dict[str, argparse.ArgumentParser]:
    parser = build_parser()
    sub = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    return dict(sub.choices)


def _io_options() -> list[tuple[str, str, str]]:
    """(command, output dest, input dest) for every output option of every command and every file input of it."""
    out = []
    for name, sub in _commands().items():
        inputs = [a.dest for a in sub._actions if a.type is Path]
        outputs = [a.dest for a in sub._actions if a.type in (output_file, output_folder)]
        out += [(name, o, i) for o in outputs for i in inputs]
    return out


def test_every_written_file_option_is_declared_as_an_output() -> None:
    # an option that writes a file but is typed as a plain Path would escape the check below
    for name, sub in _commands().items():
        for a in sub._actions:
            if a.type is Path:
                assert not re.search(r"\b(write|writes|output)\b", a.help or "", re.I), (name, a.dest, a.help)


@pytest.mark.parametrize("command, output, input_", _io_options())
def test_every_output_naming_an_input_is_refused(tmp_path, command, output, input_) -> None:
    path = tmp_path / "in.toml"
    path.write_text("x = 1\n", encoding="utf-8")
    args = argparse.Namespace(command=command, **{input_: path, output: tmp_path / "." / "in.toml"})
    with pytest.raises(UsageError, match=r"that is the input") as info:
        check_outputs(build_parser(), args)
    assert str(path.name) in str(info.value) and len(str(info.value).splitlines()) == 1


def test_two_outputs_naming_one_file_are_refused(tmp_path) -> None:
    args = argparse.Namespace(command="place-ballast", plan=tmp_path / "p.toml", json=tmp_path / "o.json",
                              step=tmp_path / "o.json")
    with pytest.raises(UsageError, match=r"--json .*o\.json: --step writes the same file"):
        check_outputs(build_parser(), args)


@pytest.mark.parametrize("argv", [
    ("report", "{car}", "--json", "{car}"),
    ("load-transfer", "{car}", "--brake", "1", "--json", "{car}"),
    ("report", "{car}", "--json", "{dot_car}"),
])
def test_report_json_over_the_model_writes_nothing(capsys, car, argv) -> None:
    before = car.read_bytes()
    mtime = car.stat().st_mtime_ns
    argv = [a.format(car=car, dot_car=car.parent / "." / car.name) for a in argv]
    code, out, err = run(capsys, *argv)
    assert code == EXIT_USAGE
    assert err == f"massmodel {argv[0]}: error: --json {argv[-1]}: that is the input model; choose another output " \
                  "name (nothing was written)\n"
    assert car.read_bytes() == before and car.stat().st_mtime_ns == mtime
    assert sorted(p.name for p in car.parent.iterdir()) == ["car.toml"]


def test_a_missing_output_folder_is_created_and_said_once(capsys, car, tmp_path) -> None:
    out = tmp_path / "new" / "deeper" / "r.json"
    code, _, err = run(capsys, "report", car, "--json", out)
    assert (code, err) == (0, f"massmodel report: created folder {tmp_path / 'new'}\n")
    assert out.is_file()
    code, _, err = run(capsys, "report", car, "--json", out.with_name("again.json"))
    assert (code, err) == (0, "")


def test_a_read_only_output_folder_names_the_output_not_a_temp_file(capsys, car, tmp_path, monkeypatch) -> None:
    import tempfile

    def refused(prefix: str, suffix: str, dir: Path) -> tuple[int, str]:  # what a read-only folder does (as non-root)
        raise PermissionError(13, "Permission denied", str(Path(dir) / f"{prefix}k2j3h4{suffix}"))

    monkeypatch.setattr(tempfile, "mkstemp", refused)
    out = tmp_path / "ro" / "r.json"
    code, _, err = run(capsys, "report", car, "--json", out)
    assert code == EXIT_USAGE
    assert err == f"massmodel report: error: {out}: Permission denied\n"
    assert not out.exists()


@pytest.mark.parametrize("victim", ["rules.toml", "base.toml"])
def test_an_output_over_a_file_read_on_the_way_is_refused(capsys, tmp_path, victim) -> None:
    # the rulebook a model names and the model it extends are inputs too, though not on the command line
    (tmp_path / "rules.toml").write_text('[[rule]]\nname = "min"\ncheck = "min_mass"\nlimit = "1 kg"\n')
    (tmp_path / "base.toml").write_text('[model]\nname = "b"\n[[part]]\npath = "a/b"\nshape = "point"\n'
                                        'mass = "2 kg"\nmaturity = "measured"\n')
    car = tmp_path / "car.toml"
    car.write_text('[model]\nname = "c"\nextends = "base.toml"\nrulebook = "rules.toml"\n')
    before = {p.name: p.read_bytes() for p in tmp_path.iterdir()}
    code, _, err = run(capsys, "report", car, "--json", tmp_path / victim)
    assert code == EXIT_USAGE
    assert err == (f"massmodel report: error: {tmp_path / victim}: that is an input of this command (read as "
                   f"'{tmp_path / victim}'); choose another output name\n")
    assert {p.name: p.read_bytes() for p in tmp_path.iterdir()} == before


def test_outside_the_command_line_files_read_may_be_written(tmp_path) -> None:
    # the guard belongs to a command run: a notebook may read a file and write it again on purpose
    from massmodel.core.atomic import write_text_atomic
    from massmodel.modelfile.loader import load_model

    path = tmp_path / "m.toml"
    path.write_text('[model]\nname = "m"\n[[part]]\npath = "a"\nshape = "point"\nmass = "1 kg"\nmaturity = "measured"\n')
    load_model(path)
    write_text_atomic(path, path.read_text().replace('"m"', '"m2"'))
    assert load_model(path).name == "m2"


def test_an_export_never_replaces_a_step_file_the_model_reads(capsys, tmp_path) -> None:
    # a part's shape read from geometry/tank.step, and an export whose STEP would be that very file: refused before
    # anything is written, the STEP untouched (its bytes and its modification time)
    pytest.importorskip("OCP")
    from massmodel.cad.occ_files import write_step_solids
    from massmodel.cad.primitives import to_solid
    from massmodel.core.shapes import Box

    geometry = tmp_path / "geometry"
    geometry.mkdir()
    step = geometry / "tank.step"
    write_step_solids(step, [("tank", to_solid(Box(0.1, 0.05, 0.02)), (0.5, 0.5, 0.5))], "tank")
    model = tmp_path / "car.toml"
    model.write_text('[model]\nname = "car"\n[units]\nlength = "mm"\n[[part]]\npath = "body/tank"\nshape = "step"\n'
                     'file = "geometry/tank.step"\nunit = "mm"\ndensity = "1000 kg/m^3"\nmaturity = "estimated"\n'
                     'at = [0, 0, 0]\n', encoding="utf-8")
    before, mtime = step.read_bytes(), step.stat().st_mtime_ns
    code, _, err = run(capsys, "export", model, "--out", geometry, "--name", "tank", "--formats", "step")
    assert code == EXIT_USAGE
    assert "that is an input of this command" in err and "tank.step" in err and len(err.splitlines()) == 1
    assert step.read_bytes() == before and step.stat().st_mtime_ns == mtime
    assert sorted(p.name for p in geometry.iterdir()) == ["tank.step"]
