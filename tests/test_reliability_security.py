"""Security review, as tests: no eval/exec/pickle/unsafe YAML anywhere, input size limits,
session paths confined, serial lines bounded before parsing, typed readings range-checked."""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

from winder.cli.session_cmd import handle_key, parse_reading
from winder.errors import InputError
from winder.link.codec import MAX_LINE, LineFramer, parse_device_line
from winder.link.errors import FrameError
from winder.profile import MAX_PROFILE_BYTES, load_bobbin, load_coil
from winder.schedule import load_machine
from winder.session import store

WINDER = Path(__file__).resolve().parent.parent / "winder"
SOURCES = sorted(WINDER.rglob("*.py"))

BANNED_CALLS = {"eval", "exec", "compile", "__import__", "input"}
BANNED_MODULES = {"pickle", "cPickle", "marshal", "shelve", "dill", "cloudpickle"}
YAML_SAFE_LOADS = {"safe_load", "safe_load_all", "SafeLoader", "CSafeLoader"}


def _unsafe_yaml_name(name: str) -> bool:
    """A yaml attribute that loads (or builds a loader) other than the safe ones."""
    low = name.lower()
    return ("load" in low or "constructor" in low) and name not in YAML_SAFE_LOADS


def _tree(p: Path) -> ast.AST:
    return ast.parse(p.read_text(), filename=str(p))


def test_no_eval_exec_pickle_or_shell_anywhere():
    bad = []
    for p in SOURCES:
        for node in ast.walk(_tree(p)):
            where = f"{p.relative_to(WINDER.parent)}:{getattr(node, 'lineno', '?')}"
            if isinstance(node, ast.Call) and isinstance(node.func, ast.Name) \
                    and node.func.id in BANNED_CALLS:
                bad.append(f"{where} calls {node.func.id}()")
            if isinstance(node, ast.Call):
                for kw in node.keywords:
                    if kw.arg == "shell" and not (isinstance(kw.value, ast.Constant)
                                                  and kw.value.value is False):
                        bad.append(f"{where} passes shell=")
                if isinstance(node.func, ast.Attribute) and node.func.attr == "system" \
                        and isinstance(node.func.value, ast.Name) and node.func.value.id == "os":
                    bad.append(f"{where} calls os.system")
            if isinstance(node, ast.Import):
                bad += [f"{where} imports {a.name}" for a in node.names
                        if a.name.split(".")[0] in BANNED_MODULES]
            if isinstance(node, ast.ImportFrom) and node.module \
                    and node.module.split(".")[0] in BANNED_MODULES:
                bad.append(f"{where} imports from {node.module}")
    assert not bad, "\n".join(bad)


def test_yaml_is_only_safe_loaded():
    bad = []
    for p in SOURCES:
        for node in ast.walk(_tree(p)):
            if isinstance(node, ast.Attribute) and isinstance(node.value, ast.Name) \
                    and node.value.id == "yaml" and _unsafe_yaml_name(node.attr):
                bad.append(f"{p.relative_to(WINDER.parent)}:{node.lineno} uses yaml.{node.attr}")
            if isinstance(node, ast.ImportFrom) and node.module == "yaml":
                bad += [f"{p.name}:{node.lineno} imports yaml.{a.name}" for a in node.names
                        if _unsafe_yaml_name(a.name)]
    assert not bad, "\n".join(bad)


def test_serial_input_is_never_read_by_line():
    """The link reads ``read(in_waiting or 1)`` into a bounded framer, never ``readline``
    (an endless line would grow without bound before any check)."""
    for p in sorted((WINDER / "link").glob("*.py")):
        for node in ast.walk(_tree(p)):
            if isinstance(node, ast.Attribute) and node.attr in ("readline", "readlines",
                                                                 "read_until"):
                assert p.name in ("simproc.py", "bench.py"), f"{p.name}:{node.lineno}"


def test_lines_are_bounded_before_parsing():
    f = LineFramer()
    assert f.feed(b"ST " + b"9" * (10 * MAX_LINE)) == []
    assert f.feed(b"\n") == []          # the overlong line is dropped whole
    assert f.overlong == 1
    with pytest.raises(FrameError):
        parse_device_line(b"ST c=" + b"1" * (2 * MAX_LINE))


@pytest.mark.parametrize("loader", [load_coil, load_bobbin, load_machine])
def test_profile_size_limit(tmp_path, loader):
    p = tmp_path / "big.yaml"
    p.write_text("name: x\n" + "#" * MAX_PROFILE_BYTES + "\n")
    with pytest.raises(InputError, match="too large"):
        loader(p)


@pytest.mark.parametrize("name", ["../../etc", "/etc/passwd", "..", "C:\\Windows", "a\x00b",
                                  "~root", "\u202e\u2066evil", "....//....//x", " ", ""])
def test_session_ids_stay_in_the_sessions_directory(tmp_path, name):
    root = tmp_path / "sessions"
    sid, path = store.new_session_dir(name, root=root)
    assert path.parent == root and path.resolve().parent == root.resolve()
    assert set(sid) <= set("abcdefghijklmnopqrstuvwxyz0123456789-")


@pytest.mark.parametrize("ref", ["../outside", "../../etc", "/etc", "sessions/../..", "-x"])
def test_session_refs_outside_are_refused(tmp_path, monkeypatch, ref):
    monkeypatch.setenv("WINDER_DATA_DIR", str(tmp_path / "data"))
    (tmp_path / "outside").mkdir()
    with pytest.raises(InputError):
        store.resolve_session(ref)


class Recorder:
    def __init__(self):
        self.calls = []

    def __getattr__(self, name):
        return lambda *a, **k: self.calls.append((name, a))


@pytest.mark.parametrize("line", ["r 1e30 ohm", "r 5 ohm 900 C", "r 5 ohm -60 C", "r -5 ohm",
                                  "r 0 ohm", "r nan ohm", "r inf ohm", "r 5 mm", "r 5",
                                  "r 5 ohm 300 K 2", "a nan", "a inf", "a -1", "a x",
                                  "k 1e99", "k nan", "k", "zz"])
def test_typed_keys_refuse_out_of_range_input(line):
    rec = Recorder()
    with pytest.raises(InputError) as ei:
        handle_key(rec, line)
    assert "\n" not in str(ei.value)
    assert rec.calls == []


def test_typed_keys_accept_sane_input():
    rec = Recorder()
    for line in ["r 812.4 ohm 23 C", "r 6.2 kohm", "k 1234", "a 900", "a", "p", "c"]:
        handle_key(rec, line)
    assert [c[0] for c in rec.calls] == ["reading", "reading", "correct_count", "accept_stop",
                                         "accept_stop", "pause", "cont"]
    assert rec.calls[0][1] == (812.4, 23.0) and rec.calls[1][1] == (6200.0, None)


def test_resume_reading_options_are_range_checked():
    assert parse_reading("812 ohm", "23 C", "--reading", "--temp") == (812.0, 23.0)
    with pytest.raises(InputError) as ei:
        parse_reading("812 ohm", "500 C", "--reading", "--temp")
    assert ei.value.where == "--temp"
    with pytest.raises(InputError):
        parse_reading("1e12 ohm", None, "--reading")
