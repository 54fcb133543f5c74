"""`winder demo` and the terminal-UI entry of `winder wind` / `winder resume` at the CLI:
bad input is one line and exit 2, never a traceback, and planning never loads the UI."""

from __future__ import annotations

from tests.conftest import PROFILES


def test_demo_refuses_an_unknown_coil(run_cli):
    r = run_cli("demo", "--coil", "no-such-coil")
    assert r.returncode == 2
    assert "no example coil 'no-such-coil'" in r.stderr
    assert "sense-6k2" in r.stderr                    # says which ones ship
    assert "Traceback" not in r.stderr
    assert len(r.stderr.strip().splitlines()) == 1


def test_demo_refuses_a_silly_speedup(run_cli):
    r = run_cli("demo", "--speedup", "0")
    assert r.returncode == 2 and "speedup" in r.stderr and "Traceback" not in r.stderr


def test_demo_help_names_the_options(run_cli):
    r = run_cli("demo", "--help")
    assert r.returncode == 0
    for opt in ("--coil", "--speedup", "--keep"):
        assert opt in r.stdout


def test_wind_with_the_ui_refuses_a_bad_coil_before_opening_anything(run_cli, tmp_path):
    bad = tmp_path / "bad.yaml"
    bad.write_text("name: x\nbobbin: nowhere.yaml\nwire: 42 AWG\ntarget: {turns: 10}\n")
    r = run_cli("wind", bad, "--port", "/dev/null-winder")
    assert r.returncode == 2 and "Traceback" not in r.stderr
    assert "bobbin" in r.stderr


def test_planning_does_not_import_the_ui(run_cli):
    import subprocess
    import sys

    from tests.conftest import ROOT, cli_env

    code = ("import sys; from winder.cli import main; "
            f"main(['plan', {str(PROFILES / 'coils' / 'driver-8ohm.yaml')!r}]); "
            "print('textual' in sys.modules, 'winder.tui' in sys.modules)")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                       env=cli_env(), cwd=ROOT, timeout=60)
    assert r.stdout.strip().splitlines()[-1] == "False False"


def test_wind_and_resume_with_the_ui_pass_the_ambient_temperature(monkeypatch):
    # without --headless the CLI hands over to winder.tui.wind; --ambient must go with it
    from winder.cli import build_parser, session_cmd

    got = {}

    class FakeTui:
        @staticmethod
        def run_wind(coil, **kw):
            got["wind"] = kw
            return 0

        @staticmethod
        def run_resume(session, **kw):
            got["resume"] = kw
            return 0

    monkeypatch.setattr(session_cmd, "_tui", lambda: FakeTui)
    parser = build_parser()
    coil = PROFILES / "coils" / "driver-8ohm.yaml"
    args = parser.parse_args(["wind", str(coil), "--port", "/dev/null", "--ambient", "25 C"])
    assert args.func(args) == 0
    args = parser.parse_args(["resume", "some-session", "--ambient", "30 degC"])
    assert args.func(args) == 0
    assert got["wind"]["ambient_c"] == 25.0
    assert got["resume"]["ambient_c"] == 30.0
