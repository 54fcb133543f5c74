"""The malformed-profile corpus (tests/malformed/) through the real CLI.

Every file's first line says what the message must name: ``# expect: KEY`` (the key
the InputError carries, e.g. ``wire.od``) or ``# expect: -`` (a file-level error:
YAML syntax, tags, alias bombs, binary garbage). Files without the line (binary
garbage, empty files) are file-level. Each case must: exit 2, print one short line on
stderr naming the file (and the key), no traceback, write nothing outside the data
directory's sessions, and answer within the subprocess timeout.

Coils go through ``winder plan`` or ``winder schedule`` (alternating) and a few
through ``winder wind --headless`` (which must refuse the profile before opening the
port); bobbins through ``winder plan --bobbin`` and ``winder gauges --bobbin``;
machines through ``winder schedule --machine`` and ``winder wind --machine``. The
loaders are also run in-process on every file (fast).
"""

from __future__ import annotations

import os
import subprocess
import sys
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import pytest

from winder.errors import InputError
from winder.planner import make_plan
from winder.profile import MAX_PROFILE_BYTES, load_bobbin, load_coil
from winder.schedule import load_machine

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
CORPUS = HERE / "malformed"
GOOD_COIL = ROOT / "profiles" / "coils" / "bench-solenoid.yaml"
TIMEOUT_S = 20      # a hang or an alias-bomb expansion fails here, not a timing assertion


def expectation(p: Path) -> str:
    """The key the message must name, or '-' for a file-level error."""
    first = p.read_bytes().split(b"\n", 1)[0]
    if first.startswith(b"# expect: "):
        return first[len(b"# expect: "):].decode().split()[0]
    return "-"


def named_file(p: Path) -> str:
    """The file the message must name: this one, or the one after the key on line 1
    (a coil whose bobbin reference points at a bad file names that file)."""
    words = p.read_bytes().split(b"\n", 1)[0].decode(errors="replace").split()
    return words[3] if len(words) > 3 and words[:2] == ["#", "expect:"] else str(p)


def files(kind: str) -> list[Path]:
    return sorted((CORPUS / kind).glob("*.yaml"))


def test_the_corpus_is_there():
    assert len(files("coils")) >= 40 and len(files("bobbins")) >= 20
    assert len(files("machines")) >= 12


def _check_error(err: InputError, p: Path, exp: str) -> None:
    assert "\n" not in str(err)
    if exp != "-":
        assert err.key == exp or exp in str(err), (p.name, err.key, str(err))


@pytest.mark.parametrize("kind", ["coils", "bobbins", "machines"])
def test_every_corpus_file_is_refused_in_process(kind):
    load = {"coils": lambda p: make_plan(load_coil(p)), "bobbins": load_bobbin,
            "machines": load_machine}[kind]
    for p in files(kind):
        with pytest.raises(InputError) as ei:
            load(p)
        _check_error(ei.value, p, expectation(p))


# ---- the real CLI ---------------------------------------------------------------------------

def _env(data: Path) -> dict[str, str]:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    env["WINDER_DATA_DIR"] = str(data)
    return env


def _run(args: list[str], cwd: Path, data: Path) -> subprocess.CompletedProcess[str]:
    """``python -m winder ARGS`` in a fresh interpreter."""
    return subprocess.run([sys.executable, "-m", "winder", *args], capture_output=True,
                          text=True, timeout=TIMEOUT_S, cwd=cwd, env=_env(data))


def _fork_cli(args: list[str], cwd: Path, data: Path) -> subprocess.CompletedProcess[str]:
    """The CLI's ``main`` in a forked child of this (warm) process: the same code path as
    ``python -m winder`` without paying the interpreter and numpy/pint start-up per case.
    stdout/stderr go to files; a child that outlives ``TIMEOUT_S`` is killed and fails."""
    import signal
    import tempfile
    import time

    from winder.cli import main

    with tempfile.TemporaryDirectory() as d:
        out, err = Path(d, "out"), Path(d, "err")
        pid = os.fork()
        if pid == 0:   # child: never returns into pytest
            code = 70
            try:
                os.dup2(os.open(out, os.O_WRONLY | os.O_CREAT), 1)
                os.dup2(os.open(err, os.O_WRONLY | os.O_CREAT), 2)
                os.chdir(cwd)
                os.environ["WINDER_DATA_DIR"] = str(data)
                sys.stdout = open(1, "w", closefd=False)  # noqa: SIM115
                sys.stderr = open(2, "w", closefd=False)  # noqa: SIM115
                sys.stdin = open(os.devnull)              # noqa: SIM115
                try:
                    code = int(main(args) or 0)
                except SystemExit as e:
                    code = e.code if isinstance(e.code, int) else 1
                except BaseException:
                    import traceback

                    traceback.print_exc()
                    code = 1
                sys.stdout.flush()
                sys.stderr.flush()
            finally:
                os._exit(code)
        deadline = time.monotonic() + TIMEOUT_S
        while True:
            done, status = os.waitpid(pid, os.WNOHANG)
            if done:
                break
            if time.monotonic() > deadline:
                os.kill(pid, signal.SIGKILL)
                os.waitpid(pid, 0)
                raise AssertionError(f"winder {' '.join(args)} did not answer in {TIMEOUT_S} s")
            time.sleep(0.005)
        rc = os.waitstatus_to_exitcode(status)
        return subprocess.CompletedProcess(args, rc, out.read_text(errors="replace"),
                                           err.read_text(errors="replace"))


def _cases(tmp: Path) -> list[tuple[list[str], Path, str]]:
    """(argv, the file the message must name, expected key or '-')."""
    no_port = str(tmp / "no-such-port")
    out: list[tuple[list[str], Path, str]] = []
    for i, p in enumerate(files("coils")):
        cmd = ["plan", str(p)] if i % 2 == 0 else ["schedule", str(p), "-o",
                                                   str(tmp / "out" / f"{p.stem}.txt")]
        out.append((cmd, p, expectation(p)))
        if i % 5 == 0:
            out.append((["wind", str(p), "--headless", "--port", no_port], p, expectation(p)))
    for i, p in enumerate(files("bobbins")):
        cmd = (["plan", "--bobbin", str(p), "--wire", "0.2 mm grade 2", "--turns", "100"]
               if i % 2 == 0 else ["gauges", "--bobbin", str(p), "--resistance", "8 ohm"])
        out.append((cmd, p, expectation(p)))
    for i, p in enumerate(files("machines")):
        cmd = (["schedule", str(GOOD_COIL), "--machine", str(p)] if i % 3 else
               ["wind", str(GOOD_COIL), "--headless", "--port", no_port, "--machine", str(p)])
        out.append((cmd, p, expectation(p)))
    return out


def _listing(root: Path) -> set[str]:
    return {str(x.relative_to(root)) for x in root.rglob("*")}


def test_every_corpus_file_through_the_cli(tmp_path):
    work = tmp_path / "cwd"
    work.mkdir()
    data = tmp_path / "data"
    (tmp_path / "out").mkdir()
    before_corpus = _listing(CORPUS)
    cases = _cases(tmp_path)
    # a handful in fresh interpreters exactly as a user runs them, the rest forked
    fresh = set(range(0, len(cases), max(1, len(cases) // 6)))
    with ThreadPoolExecutor(max_workers=3) as pool:
        futs = {i: pool.submit(_run, cases[i][0], work, data) for i in fresh}
        results = [(c, futs[i].result() if i in futs else _fork_cli(c[0], work, data))
                   for i, c in enumerate(cases)]
    bad = []
    for (argv, p, exp), r in results:
        err = r.stderr.strip()
        why = []
        if r.returncode != 2:
            why.append(f"exit {r.returncode}")
        if "Traceback" in r.stderr or len(err.splitlines()) != 1 or len(err) > 400:
            why.append("not one short line")
        if named_file(p) not in err:
            why.append("file not named")
        if exp != "-" and exp not in err:
            why.append(f"key {exp} not named")
        if why:
            bad.append(f"{' '.join(argv[:1])} {p.parent.name}/{p.name}: {', '.join(why)}: "
                       f"{err[-300:]!r}")
    assert not bad, "\n".join(bad)
    # nothing written: no session, no output file, nothing in the working directory or corpus
    assert not (data / "sessions").exists() or not any((data / "sessions").iterdir())
    assert not any((tmp_path / "out").iterdir())
    assert not any(work.iterdir())
    assert _listing(CORPUS) == before_corpus
    assert not Path("/tmp/winder-pwned").exists()


def test_files_that_are_not_profiles(tmp_path):
    """Missing files, directories, oversized files, unreadable files, FIFOs, /dev/zero."""
    big = tmp_path / "big.yaml"
    big.write_text("name: x\n" + "# padding\n" * (MAX_PROFILE_BYTES // 10 + 10))
    noperm = tmp_path / "noperm.yaml"
    noperm.write_text("name: x\n")
    noperm.chmod(0)
    fifo = tmp_path / "fifo.yaml"
    os.mkfifo(fifo)
    d = tmp_path / "a-directory.yaml"
    d.mkdir()
    missing = tmp_path / "missing.yaml"
    targets = [missing, d, big, fifo, Path("/dev/zero")]
    if os.geteuid() != 0:       # root reads files whatever their mode
        targets.append(noperm)
    cases = []
    for t in targets:
        cases += [["plan", str(t)], ["schedule", str(t)],
                  ["plan", "--bobbin", str(t), "--wire", "0.2 mm grade 2", "--turns", "10"],
                  ["schedule", str(GOOD_COIL), "--machine", str(t)]]
    cases.append(["wind", str(big), "--headless", "--port", str(tmp_path / "none")])
    work = tmp_path / "cwd"
    work.mkdir()
    results = [(c, (_run if i == 0 else _fork_cli)(c, work, tmp_path / "data"))
               for i, c in enumerate(cases)]
    bad = []
    for argv, r in results:
        err = r.stderr.strip()
        named = [a for a in argv if a.startswith(str(tmp_path)) or a == "/dev/zero"]
        if (r.returncode != 2 or "Traceback" in r.stderr or len(err.splitlines()) != 1
                or not any(n in err for n in named)):
            bad.append(f"{argv}: exit {r.returncode}: {err[-300:]!r}")
    assert not bad, "\n".join(bad)
    assert not any(work.iterdir())
