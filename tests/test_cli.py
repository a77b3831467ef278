"""The command line's entry point: a light start, Ctrl-C at any point, STATEs that start with '-'.

The start is checked by the set of modules a fresh interpreter has loaded (not by a
timer); Ctrl-C by a real SIGINT sent to a real process at several moments after it
started.  Exit status 130 after SIGINT is 128 + 2, the shell convention (common practice).
"""

from __future__ import annotations

import gc
import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

import orbitalrender
from orbitalrender.cli import _FULL_COLLECTION_EVERY, COMMANDS, build_parser, main, protect_leading_minus

REPO = Path(__file__).resolve().parents[1]
#: Libraries that take long to import; --help and `import orbitalrender` load none of them.
HEAVY = ("matplotlib", "numba", "trimesh", "skimage", "scipy", "manifold3d", "PIL")
_ENV = {**os.environ, "PYTHONPATH": str(REPO), "MPLBACKEND": "Agg"}


def _modules_after(code: str) -> set[str]:
    """Top-level names of the modules a fresh interpreter has loaded after running `code`."""
    probe = (f"{code}\nimport sys, json\n"
             "print('MODULES=' + json.dumps(sorted({m.split('.')[0] for m in sys.modules})), "
             "file=sys.stderr)")
    done = subprocess.run([sys.executable, "-c", probe], env=_ENV, cwd=REPO, capture_output=True,
                          text=True, timeout=120)
    line = next(ln for ln in done.stderr.splitlines() if ln.startswith("MODULES="))
    return set(json.loads(line[len("MODULES="):]))


def test_import_loads_no_heavy_library():
    assert not _modules_after("import orbitalrender") & set(HEAVY)


@pytest.mark.parametrize("command", [None, *COMMANDS])
def test_help_loads_no_heavy_library(command):
    argv = ["orbitalrender", *([command] if command else []), "--help"]
    code = ("import runpy, sys\n"
            f"sys.argv = {argv!r}\n"
            "try:\n    runpy.run_module('orbitalrender', run_name='__main__')\n"
            "except SystemExit:\n    pass")
    loaded = _modules_after(code)
    assert "orbitalrender" in loaded
    assert not loaded & set(HEAVY), loaded & set(HEAVY)


@pytest.mark.parametrize("suffix", [".ply", ".obj", ".stl"])
def test_a_plain_mesh_loads_no_mesh_or_drawing_library(suffix, tmp_path):
    # a plain export writes and checks its file with the package's own writers and readers
    out = tmp_path / f"m{suffix}"
    argv = ["orbitalrender", "mesh", "2pz", "--resolution", "24", "--size-mm", "30", "--out", str(out)]
    code = ("import runpy, sys\n"
            f"sys.argv = {argv!r}\n"
            "try:\n    runpy.run_module('orbitalrender', run_name='__main__')\n"
            "except SystemExit as exc:\n    assert not exc.code, exc.code")
    loaded = _modules_after(code)
    assert out.is_file()
    assert not loaded & {"trimesh", "manifold3d", "matplotlib", "networkx"}


def test_public_names_resolve_and_dir_lists_them():
    listed = dir(orbitalrender)
    for name in orbitalrender.__all__:
        assert name in listed
        assert getattr(orbitalrender, name) is not None
    with pytest.raises(AttributeError):
        orbitalrender.no_such_name  # noqa: B018


# -- Ctrl-C ----------------------------------------------------------------------------
#: Moments (s after the start) at which SIGINT is sent: during the imports, the parsing
#: and the work of a figure that takes far longer than the last of them (four states at
#: N = 256 drawn at 3000 x 2400 px, supersampling 4: about 11 s on a loaded 2-core machine,
#: at least twice the last moment when idle; a later moment could see the work finished).
_MOMENTS_S = (0.4, 0.8, 1.5, 3.0)


@pytest.mark.parametrize("delay_s", _MOMENTS_S)
def test_ctrl_c_at_any_moment_exits_130_with_one_line(delay_s, tmp_path):
    out = tmp_path / "big.png"
    proc = subprocess.Popen(
        [sys.executable, "-m", "orbitalrender", "figure", "3dz2", "4fxyz", "4fz3", "5,4,1",
         "--resolution", "256",
         "--size", "3000x2400", "--supersample", "4", "--out", str(out)],
        env=_ENV, cwd=tmp_path, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    time.sleep(delay_s)
    proc.send_signal(signal.SIGINT)
    _, err = proc.communicate(timeout=300)
    assert proc.returncode == 130, err
    assert "Traceback" not in err
    assert err.strip() == "orbitalrender: interrupted", err
    assert list(tmp_path.iterdir()) == []  # no partial or temporary file


@pytest.mark.parametrize("entry", [["-m", "orbitalrender"], ["-c", "import sys; from orbitalrender.cli "
                                                         "import main; sys.exit(main())"]],
                         ids=["python -m", "installed command"])
def test_a_command_that_inherits_sigint_ignored_keeps_ignoring_it(entry, tmp_path):
    # `orbitalrender ... &` in a script: the shell starts the job with SIGINT ignored (POSIX,
    # Shell Command Language 2.11), so that the terminal's Ctrl-C leaves it running
    out = tmp_path / "r.png"
    proc = subprocess.Popen([sys.executable, *entry, "radial", "2s", "--out", str(out)], env=_ENV,
                            cwd=tmp_path, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_IGN))
    sent = 0
    while proc.poll() is None:  # through the start, the parsing and the work
        proc.send_signal(signal.SIGINT)
        sent += 1
        time.sleep(0.05)
    _, err = proc.communicate(timeout=120)
    assert sent > 1
    assert proc.returncode == 0, err
    assert out.is_file()


#: Run by the next test in a fresh interpreter: a command whose first file written starts
#: with a stop signal (argv[1]) arriving inside a ctypes callback (where numba's compiler
#: cache runs Python code for llvmlite), after which the work would go on for longer than
#: the test waits.
_SIGNAL_IN_A_CALLBACK = """
import ctypes, signal, sys, time
import orbitalrender.atomic as atomic
from orbitalrender.cli import main

signum = int(sys.argv[1])
real_temporary = atomic._temporary

def signalled_in_a_callback():
    # to this thread, so the handler runs before raise_signal returns, inside the callback,
    # which drops its exception (os.kill can reach one of numba's threads instead, and
    # the handler then waits for the main thread's next bytecode, after the sleep below)
    signal.raise_signal(signum)

def temporary(target):
    ctypes.CFUNCTYPE(None)(signalled_in_a_callback)()
    time.sleep(120)
    return real_temporary(target)

atomic._temporary = temporary
sys.exit(main(sys.argv[2:]))
"""

_ONE_MESH = """
[[outputs]]
name = "m"
kind = "mesh"
state = "2pz"
resolution = 24
size_mm = 30
"""


@pytest.mark.parametrize("sig, status, line, argv", [
    (signal.SIGINT, 130, "orbitalrender: interrupted",
     ["mesh", "2pz", "--resolution", "24", "--size-mm", "30", "--out", "out/m.ply"]),
    (signal.SIGTERM, 143, "orbitalrender gallery: terminated",
     ["gallery", "../g.toml", "--out", "out", "--jobs", "1", "--quiet"]),
], ids=["mesh-SIGINT", "gallery-SIGTERM"])
def test_a_stop_signal_that_arrives_inside_a_ctypes_callback_still_ends_the_command(
        tmp_path, sig, status, line, argv):
    # The ignored exception of a ctypes callback made `figure` go on and exit 0 with a
    # six-line "Exception ignored" message (one CI run of the test above, SIGINT at 0.8 s).
    (tmp_path / "g.toml").write_text(_ONE_MESH)
    work = tmp_path / "work"
    (work / "out").mkdir(parents=True)
    proc = subprocess.run([sys.executable, "-c", _SIGNAL_IN_A_CALLBACK, str(int(sig)), *argv],
                          env=_ENV, cwd=work, capture_output=True, text=True, timeout=60)
    assert proc.returncode == status, proc.stderr
    assert proc.stderr.strip() == line, proc.stderr
    left = [p.relative_to(work).as_posix() for p in work.rglob("*") if p.is_file()]
    assert not [name for name in left if ".part" in name or name.startswith("out/m")], left


def test_a_ctrl_c_lost_for_good_still_keeps_no_output(monkeypatch, tmp_path, capsys):
    # the interrupt is dropped in a ctypes callback and (here) never sent again: the work
    # reaches its end, and the command still ends as interrupted, with no file
    import ctypes

    import orbitalrender.atomic as atomic
    import orbitalrender.cli as cli

    resent = []
    monkeypatch.setattr(cli, "_start_signalling_again", resent.append)
    real_temporary = atomic._temporary

    def temporary(target):
        ctypes.CFUNCTYPE(None)(lambda: cli._raise_interrupt(signal.SIGINT, None))()
        return real_temporary(target)

    monkeypatch.setattr(atomic, "_temporary", temporary)
    out = tmp_path / "r.png"
    callers_hook = sys.unraisablehook
    assert main(["radial", "1s", "--out", str(out)]) == 130
    assert capsys.readouterr().err.strip() == "orbitalrender: interrupted"
    assert resent == [signal.SIGINT]
    assert list(tmp_path.iterdir()) == []
    assert sys.unraisablehook is callers_hook  # put back


def test_interrupt_during_the_work_is_status_130(monkeypatch, capsys):
    from orbitalrender.jobs import describe

    def interrupted(*args, **kwargs):
        raise KeyboardInterrupt

    monkeypatch.setattr(describe, "describe_state", interrupted)
    assert main(["describe", "1s"]) == 130
    assert capsys.readouterr().err.strip() == "orbitalrender: interrupted"


# -- STATEs that start with '-' ---------------------------------------------------------
def test_state_with_a_leading_minus_is_a_state(capsys):
    # -1*psi is the same state as psi up to a global phase: the same <r> (3 n^2 - l(l+1)) / 2
    # = 5 a0 for 2p (Bethe and Salpeter, eq. 3.26)
    for argv in (["describe", "-1*2pz", "--json"], ["describe", "-i*2pz", "--json"],
                 ["describe", "--json", "-i*2pz"], ["describe", "--json", "--", "-i*2pz"]):
        assert main(argv) == 0, capsys.readouterr().err
        assert json.loads(capsys.readouterr().out)["mean_radius_a0"] == pytest.approx(5.0, rel=1e-9)


def test_lists_and_negative_option_values(tmp_path, capsys):
    out = tmp_path / "r.png"
    assert main(["radial", "1s", "-2s", "--fraction", "0.5", "--out", str(out)]) == 0
    report = tmp_path / "s.json"
    assert main(["section", "-2pz", "--offset", "-0.5", "--pixels", "32", "--out",
                 str(tmp_path / "s.png"), "--report", str(report)]) == 0
    assert json.loads(report.read_text())["offset_a0"] == -0.5
    capsys.readouterr()


def test_rewriting_keeps_options_and_marks_states():
    parser = build_parser()
    assert protect_leading_minus(parser, ["figure", "--times", "-1,2", "-1*2pz"]) == \
        ["figure", "--times=-1,2", " -1*2pz"]
    assert protect_leading_minus(parser, ["section", "2pz", "--offset", "-1.5", "--no-nodes"]) == \
        ["section", "2pz", "--offset=-1.5", "--no-nodes"]
    assert protect_leading_minus(parser, ["--debug", "describe", "--res", "16", "-2s"]) == \
        ["--debug", "describe", "--res", "16", " -2s"]
    assert protect_leading_minus(parser, ["describe", "--", "-2s"]) == ["describe", "--", "-2s"]


def test_a_missing_state_mentions_the_double_dash(capsys):
    with pytest.raises(SystemExit) as exc:
        main(["radial", "--out", "x.png"])
    assert exc.value.code == 2
    assert "'--'" in capsys.readouterr().err


def test_an_interrupt_a_library_turned_into_another_error_is_still_an_interrupt(monkeypatch, capsys):
    # some libraries catch KeyboardInterrupt and raise their own error instead (numba does
    # during its import); once SIGINT has arrived, the command still ends as interrupted
    import orbitalrender.cli as cli
    from orbitalrender.jobs import describe

    def swallowed(*args, **kwargs):
        try:
            cli._raise_interrupt(signal.SIGINT, None)
        except KeyboardInterrupt:
            raise ImportError("a library's own message") from None

    monkeypatch.setattr(describe, "describe_state", swallowed)
    assert main(["describe", "1s"]) == 130
    assert capsys.readouterr().err.strip() == "orbitalrender: interrupted"
    monkeypatch.undo()
    assert main(["describe", "1s", "--json"]) == 0  # the next call starts afresh
    capsys.readouterr()


# -- numba's kernel cache ----------------------------------------------------------------
def test_numba_kernels_are_cached_per_user_not_inside_the_package(tmp_path):
    # A cache written beside the installed sources outlives `pip uninstall` as a folder of
    # cache files alone, which then shadows an editable install of the same package.
    env = {k: v for k, v in _ENV.items() if k != "NUMBA_CACHE_DIR"}
    env["XDG_CACHE_HOME"] = str(tmp_path / "cache")
    code = ("import os, orbitalrender as orb; "
            "orb.sample(orb.eigenstate(2, 1, 0), resolution=12); print(os.environ['NUMBA_CACHE_DIR'])")
    done = subprocess.run([sys.executable, "-c", code], env=env, cwd=tmp_path, capture_output=True,
                          text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    folder = Path(done.stdout.strip())
    assert folder == tmp_path / "cache" / "orbitalrender" / "numba"
    assert any(folder.rglob("*.nbi")), "no kernel index was written to the per-user cache"
    # the user's own setting is kept
    env["NUMBA_CACHE_DIR"] = str(tmp_path / "mine")
    code = "import os, orbitalrender; print(os.environ['NUMBA_CACHE_DIR'])"
    done = subprocess.run([sys.executable, "-c", code], env=env, cwd=tmp_path, capture_output=True,
                          text=True, timeout=120)
    assert done.stdout.strip() == str(tmp_path / "mine")


def test_a_caller_in_python_keeps_its_garbage_collector_settings(capsys):
    # only a real process (main() without argv) collects less often and freezes at the end
    before = gc.get_threshold(), gc.get_freeze_count()
    assert main(["describe", "1s"]) == 0
    assert (gc.get_threshold(), gc.get_freeze_count()) == before


def test_a_real_process_collects_less_often_and_freezes_at_the_end():
    code = ("import gc, runpy, sys\n"
            "sys.argv = ['orbitalrender', 'describe', '1s']\n"
            "try:\n    runpy.run_module('orbitalrender', run_name='__main__')\n"
            "except SystemExit:\n    pass\n"
            "print('GC', gc.get_threshold()[2], gc.get_freeze_count() > 0, file=sys.stderr)")
    done = subprocess.run([sys.executable, "-c", code], env=_ENV, cwd=REPO, capture_output=True, text=True,
                          timeout=120)
    assert f"GC {_FULL_COLLECTION_EVERY} True" in done.stderr, done.stderr
