"""Exit statuses of every command: a mistake in the input gives one line on stderr and
status 2, a fault inside the tool a short message and status 1 (traceback with --debug).

The commands are run through :func:`orbitalrender.cli.main` (a few through
``python -m orbitalrender`` in a subprocess).  Status 2 for usage errors is the
convention of POSIX utilities and of Python's argparse (common practice); the
one-line shape is the tool's own rule.
"""

from __future__ import annotations

import os
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pytest

from orbitalrender.cli import COMMANDS, main
from orbitalrender.lattice import memory

REPO = Path(__file__).resolve().parents[1]


def run_cli(argv: list[str], capsys) -> tuple[int, str, str]:
    """(exit status, stdout, stderr) of the command line, in this process."""
    try:
        status = main([str(a) for a in argv])
    except SystemExit as exc:  # argparse refuses unknown options and choices itself
        status = exc.code
    out, err = capsys.readouterr()
    return status, out, err


def assert_one_line_error(status: int, err: str, *fragments: str) -> str:
    """Status 2, exactly one line on stderr that names the command and says 'error',
    contains every fragment, and no traceback."""
    assert status == 2, err
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert "Traceback" not in err
    line = lines[0]
    assert line.startswith("orbitalrender") and "error:" in line, line
    for fragment in fragments:
        assert fragment in line, (fragment, line)
    return line


# A quick valid run of each command (small lattice, small picture), its output file, and
# a function inside the command that a test can make fail as an internal fault would.
def _gallery_config(tmp: Path) -> Path:
    cfg = tmp / "g.toml"
    cfg.write_text('[[outputs]]\nname = "p2"\nkind = "radial"\nstates = ["2pz"]\n', encoding="utf-8")
    return cfg


QUICK = {
    "describe": (lambda t: ["describe", "2,1,0"], None, "orbitalrender.jobs.describe.describe_state"),
    "figure": (lambda t: ["figure", "2pz", "--resolution", "20", "--size", "240x160", "--supersample", "1",
                          "--out", t / "f.png"], "f.png", "orbitalrender.picture.compose.figure_3d"),
    "mesh": (lambda t: ["mesh", "2pz", "--fraction", "0.8", "--resolution", "20", "--out", t / "m.ply"],
             "m.ply", "orbitalrender.mesh.pipeline.surface_arrays"),
    "section": (lambda t: ["section", "2pz", "--pixels", "32", "--out", t / "s.png"], "s.png",
                "orbitalrender.picture.output.save_figure"),
    "radial": (lambda t: ["radial", "2pz", "--out", t / "r.png"], "r.png",
               "orbitalrender.picture.output.save_figure"),
    "cloud": (lambda t: ["cloud", "2pz", "--points", "2000", "--seed", "1", "--size", "240x160",
                         "--out", t / "c.png"], "c.png", "orbitalrender.lattice.cloud.draw_cloud"),
    "gallery": (lambda t: ["gallery", _gallery_config(t), "--out", t / "g", "--jobs", "1", "--quiet"],
                "g/p2.png", "orbitalrender.gallery.runner.run_gallery"),
}


def _boom(*args, **kwargs):
    raise RuntimeError("simulated internal fault")


def test_every_command_is_covered_here():
    # a new command must get a quick run and a fault point in QUICK (and bad inputs below)
    assert set(COMMANDS) <= set(QUICK)


@pytest.mark.parametrize("command", sorted(COMMANDS))
def test_quick_run_succeeds(command, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    argv, output, _ = QUICK[command]
    status, out, err = run_cli(argv(tmp_path), capsys)
    assert status == 0, err
    if output:
        assert (tmp_path / output).stat().st_size > 0


@pytest.mark.parametrize("command", sorted(COMMANDS))
@pytest.mark.parametrize("debug", [False, True])
def test_internal_fault_is_status_1_with_traceback_only_on_debug(command, debug, tmp_path, capsys,
                                                                  monkeypatch):
    monkeypatch.chdir(tmp_path)
    argv, _, target = QUICK[command]
    monkeypatch.setattr(target, _boom)
    status, _, err = run_cli((["--debug"] if debug else []) + argv(tmp_path), capsys)
    assert status == 1, err
    assert "internal error" in err and "RuntimeError" in err and "simulated internal fault" in err
    assert ("Traceback" in err) == debug
    if not debug:
        assert len(err.strip().splitlines()) == 1 and "--debug" in err


def test_gallery_output_with_an_internal_fault_is_status_1(tmp_path, capsys, monkeypatch):
    # a fault while drawing one output: the run finishes, the output is reported, status 1
    monkeypatch.setattr("orbitalrender.picture.output.write_report", _boom)
    status, out, err = run_cli(QUICK["gallery"][0](tmp_path), capsys)
    assert status == 1
    assert "made 0 of 1" in out
    assert "output 'p2'" in err and "RuntimeError" in err and "Traceback" not in err


# -- bad input: (command, arguments after the quick run's, fragment of the message) ------------
_NAN_FIELD = "nan_field.npy"
_ZERO_FIELD = "zero_field.npy"


def _fields(tmp: Path) -> None:
    values = np.ones((8, 8, 8))
    values[2, 3, 4] = np.nan
    np.save(tmp / _NAN_FIELD, values)
    np.save(tmp / _ZERO_FIELD, np.zeros((8, 8, 8)))


STATE_ERRORS = [
    ("2,5,0", "l must satisfy 0 <= l < n"),
    ("2,1,3", "m"),
    ("0,0,0", "n"),
    ("9x", "STATE '9x'"),
    ("1s - 1s", "zero norm"),  # coefficients that cancel
    ("3,1,0@(0,0,nan)", "STATE"),
]
OPTION_ERRORS = [
    (["--Z", "nan"], "Z must be"),
    (["--Z", "-1"], "--Z must be a number in [0.01, 137]"),
    (["--Z", "inf"], "Z must be"),
    (["--Z", "1e-300"], "--Z must be a number in [0.01, 137]"),  # once doubled a search bound without end
    (["--Z", "1000"], "--Z must be a number in [0.01, 137]"),
    (["--nucleus", "bogus"], "unknown nucleus 'bogus'"),
    (["--nucleus", "nan"], "finite"),
    (["--nucleus", "1e-200"], "mass ratio must be at least 1"),
    (["--time", "nan"], "--time must be a finite number"),
]
COMMAND_ERRORS = {
    "describe": [
        (["--bogus"], "unrecognized arguments: --bogus"),
        (["--field", "missing.npy"], "no such file"),
        (["--field", _NAN_FIELD, "--spacing-a0", "0.5"], "NaN or infinite at index (2, 3, 4)"),
        (["--field", _ZERO_FIELD, "--spacing-a0", "0.5"], "zero everywhere"),
        (["--field", _NAN_FIELD], "spacing"),
    ],
    "figure": [
        (["--fraction", "nan"], "--fraction"),
        (["--fraction", "1"], "--fraction"),
        (["--resolution", "4"], "--resolution must be an integer in [8, 1024]"),
        (["--resolution", "5000"], "--resolution must be an integer in [8, 1024]"),
        (["--box", "0.5"], "edge of the lattice"),
        (["--box", "nan"], "--box must be a number > 0"),
        (["--fraction", "0.0001"], "the surface is empty"),
        (["--zoom", "nan"], "zoom"),
        (["--azimuth", "inf"], "azimuth"),
        (["--size", "10x10"], "--size must be an integer in [64, 8192]"),
        (["--size", "axb"], "cannot read the size"),
        (["--supersample", "9"], "--supersample"),
        (["--dpi", "nan"], "--dpi"),
        (["--cutaway", "w>3"], "cannot read the cutaway"),
        (["--times", "a,b"], "--times"),
        (["--out", "x.bmp"], ".bmp"),
        (["--out", "no/such/folder/x.png"], "does not exist"),
        (["--phase-map", "rainbow"], "--phase-map must be one of"),
    ],
    "mesh": [
        (["--fraction", "0"], "fraction"),
        (["--box", "0.5"], "edge of the lattice"),
        (["--resolution", "5000"], "--resolution must be an integer in [8, 1024]"),
        (["--out", "m.xyz"], ".xyz"),
        (["--size-mm", "-3"], "--size-mm must be a number in [0.1, 10000]"),
        (["--size-mm", "nan"], "--size-mm must be a number in [0.1, 10000]"),
        (["--printable"], "--size-mm"),
        (["--split", "phase", "--bands", "0"], "--bands must be an integer in [2, 24]"),
        (["--size-mm", "40", "--printable", "--min-thickness-mm", "nan"], "thickness"),
    ],
    "section": [
        (["--pixels", "3"], "--pixels"),
        (["--normal", "0,0,0"], "zero vector"),
        (["--normal", "nan,1,0"], "--normal"),
        (["--extent", "-1"], "--extent"),
        (["--offset", "inf"], "--offset"),
        (["--offset", "1e6"], "misses"),
        (["--decades", "nan"], "--decades"),
        (["--field", _NAN_FIELD, "--spacing-a0", "0.5"], "NaN or infinite at index (2, 3, 4)"),
    ],
    "radial": [
        (["--quantity", "bogus"], "--quantity"),
        (["--fraction", "2"], "--fraction"),
        (["--dpi", "0"], "--dpi must be a number in [10, 2400]"),
    ],
}


def _with_state(command: str, tmp: Path, state: str | None, extra: list[str]) -> list:
    """The quick run of `command` with its STATE replaced (or left out) and `extra` appended."""
    argv = QUICK[command][0](tmp)
    return [argv[0]] + ([] if state is None else [state]) + argv[2:] + extra


_STATE_COMMANDS = [c for c in ("describe", "figure", "mesh", "section", "radial") if c in COMMANDS]


@pytest.mark.parametrize("command", _STATE_COMMANDS)
@pytest.mark.parametrize("state, fragment", STATE_ERRORS)
def test_bad_state_is_one_line_and_status_2(command, state, fragment, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    status, _, err = run_cli(_with_state(command, tmp_path, state, []), capsys)
    assert_one_line_error(status, err, fragment)
    assert not any(p.name.endswith((".png", ".ply")) for p in tmp_path.iterdir())


@pytest.mark.parametrize("command", _STATE_COMMANDS)
@pytest.mark.parametrize("extra, fragment", OPTION_ERRORS)
def test_bad_physics_option_is_one_line_and_status_2(command, extra, fragment, tmp_path, capsys,
                                                     monkeypatch):
    monkeypatch.chdir(tmp_path)
    status, _, err = run_cli(_with_state(command, tmp_path, "2pz", extra), capsys)
    assert_one_line_error(status, err, fragment)


@pytest.mark.parametrize("command, extra, fragment",
                         [(c, e, f) for c, cases in COMMAND_ERRORS.items() if c in COMMANDS
                          for e, f in cases])
def test_bad_option_is_one_line_and_status_2(command, extra, fragment, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    _fields(tmp_path)
    uses_field = "--field" in extra
    status, _, err = run_cli(_with_state(command, tmp_path, None if uses_field else "2pz", extra), capsys)
    assert_one_line_error(status, err, fragment)


GALLERY_ERRORS = [
    ('[[outputs]]\nname = "a"\nkind = "figure"\nstate = "2pz"\nfraction = 1.5\n', "key 'fraction'"),
    ('[[outputs\nname = "a"\n', "not valid TOML"),
    ('[[outputs]]\nname = "a"\nkind = "radial"\nstates = ["2,7,0"]\n', "key 'states'"),
    ('[[outputs]]\nname = "a"\nkind = "figure"\nstate = "2pz"\nresolution = 4000\n', "key 'resolution'"),
    ('[[outputs]]\nname = "a"\nkind = "hologram"\nstate = "2pz"\n', "key 'kind'"),
    ('[[outputs]]\nname = "a"\nkind = "figure"\nstate = "2pz"\nbogus = 1\n', "key 'bogus'"),
    ('[[outputs]]\nname = "a"\nkind = "figure"\nfield = "missing.npy"\n', "key 'field'"),
    ('title = "nothing"\n', "outputs"),
]


@pytest.mark.skipif("gallery" not in COMMANDS, reason="no gallery command")
@pytest.mark.parametrize("text, fragment", GALLERY_ERRORS)
def test_bad_gallery_config_is_one_line_status_2_and_writes_nothing(text, fragment, tmp_path, capsys):
    cfg = tmp_path / "bad.toml"
    cfg.write_text(text, encoding="utf-8")
    status, _, err = run_cli(["gallery", cfg, "--out", tmp_path / "out", "--jobs", "1"], capsys)
    assert_one_line_error(status, err, "bad.toml", fragment)
    assert not (tmp_path / "out").exists() or not any((tmp_path / "out").iterdir())


@pytest.mark.skipif("gallery" not in COMMANDS, reason="no gallery command")
@pytest.mark.parametrize("content", [b"\xff\xfe", None])
def test_unreadable_or_missing_gallery_config_is_status_2(content, tmp_path, capsys):
    cfg = tmp_path / "g.toml"
    if content is not None:
        cfg.write_bytes(content)
    status, _, err = run_cli(["gallery", cfg, "--out", tmp_path / "out"], capsys)
    assert_one_line_error(status, err, "g.toml")


@pytest.mark.skipif("gallery" not in COMMANDS, reason="no gallery command")
def test_gallery_output_that_fails_on_its_input_is_status_2(tmp_path, capsys):
    # valid keys, but the box cuts the surface open: that output fails, the run reports it
    cfg = tmp_path / "g.toml"
    cfg.write_text('[[outputs]]\nname = "cut"\nkind = "mesh"\nstate = "2pz"\nbox_a0 = 0.5\n'
                   'resolution = 16\n', encoding="utf-8")
    status, out, err = run_cli(["gallery", cfg, "--out", tmp_path / "out", "--jobs", "1", "--quiet"], capsys)
    assert status == 2
    assert "made 0 of 1" in out
    assert "output 'cut'" in err and "edge of the lattice" in err and "Traceback" not in err


def test_missing_command_and_unknown_command_are_status_2(capsys):
    for argv in ([], ["paint"]):
        status, _, err = run_cli(argv, capsys)
        assert_one_line_error(status, err)


def test_memory_refusal_names_the_estimate_and_what_fits(tmp_path, capsys, monkeypatch):
    monkeypatch.setattr(memory, "available_bytes", lambda: 256 * 2**20)
    status, _, err = run_cli(["mesh", "4,3,1", "--fraction", "0.9", "--resolution", "400",
                              "--out", tmp_path / "m.stl"], capsys)
    line = assert_one_line_error(status, err, "400^3", "GiB", "largest resolution that fits is")
    largest = int(line.rsplit(" ", 1)[1])
    # the named resolution really fits the same budget, and one more does not
    need = memory.sampling_bytes(largest) + largest**3 * memory.surface_bytes_per_point()
    need_next = memory.sampling_bytes(largest + 1) + (largest + 1) ** 3 * memory.surface_bytes_per_point()
    assert need <= 0.8 * 256 * 2**20 < need_next


# -- through the real entry point ----------------------------------------------------------
def _python(*args: str, code: str | None = None) -> subprocess.CompletedProcess:
    """``python -m orbitalrender ARGS``, or ``python -c CODE ARGS``."""
    env = dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    cmd = [sys.executable, "-c", code, *args] if code else [sys.executable, "-m", "orbitalrender", *args]
    return subprocess.run(cmd, capture_output=True, text=True, timeout=180, cwd=REPO, env=env)


def test_subprocess_bad_input_is_one_line_and_status_2():
    done = _python("describe", "2,5,0")
    assert done.returncode == 2 and done.stderr.count("\n") == 1 and "l must satisfy" in done.stderr
    assert done.stdout == ""


def test_subprocess_internal_fault_with_debug_is_status_1_and_shows_the_traceback():
    code = textwrap.dedent("""
        import sys
        import orbitalrender.jobs.describe as d
        def boom(*a, **k):
            raise RuntimeError("simulated internal fault")
        d.describe_state = boom
        from orbitalrender.cli import main
        sys.exit(main(sys.argv[1:]))
    """)
    debug = _python("--debug", "describe", "2pz", code=code)
    assert debug.returncode == 1
    assert "internal error: RuntimeError: simulated internal fault" in debug.stderr
    assert "Traceback" in debug.stderr and "boom" in debug.stderr


def _traced_peak(fn):
    import tracemalloc

    tracemalloc.start()
    try:
        result = fn()
        return result, tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()


@pytest.mark.parametrize("argv, fragment", [
    (["figure", "4,3,1", "--resolution", "400", "--out", "f.png"], "400^3 lattice with its surface"),
    (["figure", "2pz", "--resolution", "24", "--size", "8192x8192", "--supersample", "4", "--out", "f.png"],
     "8192 x 8192 px render"),
    (["figure", "--shell", "3", "--resolution", "400", "--out", "f.png"], "400^3 lattice with its surface"),
    (["mesh", "4,3,1", "--fraction", "0.9", "--resolution", "400", "--out", "m.glb"],
     "400^3 lattice with its surface"),
])
def test_commands_refuse_a_request_too_big_before_allocating_it(argv, fragment, tmp_path, capsys,
                                                                 monkeypatch):
    monkeypatch.chdir(tmp_path)
    run_cli(["describe", "1s"], capsys)  # build the parser once, outside the traced call
    monkeypatch.setattr(memory, "available_bytes", lambda: 320 * 2**20)  # 256 MiB usable
    (status, _, err), peak = _traced_peak(lambda: run_cli(argv, capsys))
    assert_one_line_error(status, err, fragment, "GiB", "fits")
    assert peak < 16 * 2**20, peak  # the refused request is 0.7 GiB or more
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize("command, state, extra, fragment", [
    ("describe", None, [], "give either a STATE or --field FILE"),
    ("figure", None, ["--shell", "0"], "--shell must be an integer in [1, 7], got 0"),
    ("figure", None, ["--shell", "60"], "--shell must be an integer in [1, 7], got 60"),
    ("figure", None, [], "--shell"),
    ("figure", "2pz", ["--shell", "2"], "not more than one"),
    ("mesh", "2,1,1", ["--split", "sign"], "--split sign needs a real state"),
    ("radial", "1s@(0,0,1) + 1s", [], "one (n, l) shell on one centre"),
    ("section", None, [], "give either a STATE or --field FILE"),
])
def test_bad_combination_is_one_line_and_status_2(command, state, extra, fragment, tmp_path, capsys,
                                                  monkeypatch):
    if command not in COMMANDS:
        pytest.skip(f"no {command} command")
    monkeypatch.chdir(tmp_path)
    status, _, err = run_cli(_with_state(command, tmp_path, state, extra), capsys)
    assert_one_line_error(status, err, fragment)


def test_a_reader_that_goes_away_is_no_error():
    # `orbitalrender describe ... | head -1`: the pipe closes before the output is written;
    # status 141 (128 + SIGPIPE, the shell's convention) and nothing on stderr
    proc = subprocess.Popen([sys.executable, "-m", "orbitalrender", "describe", "3dz2"],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    proc.stdout.close()
    err = proc.stderr.read().decode()
    proc.wait(timeout=120)
    assert proc.returncode in (0, 141), err
    assert err == ""


# -- extreme numbers and odd files: the tool's own one-line message and status 2 -----------------
@pytest.mark.parametrize("argv, fragment", [
    (["mesh", "2pz", "--fraction", "0.9", "--resolution", "24", "--size-mm", "1e-300", "--out", "m.stl"],
     "--size-mm must be a number in [0.1, 10000]"),  # was ZeroDivisionError, status 1
    (["mesh", "2pz", "--fraction", "0.9", "--resolution", "24", "--size-mm", "1e300", "--out", "m.stl"],
     "--size-mm must be a number in [0.1, 10000]"),  # was OverflowError, status 1
    (["describe", "--field", "/dev/zero"], "not a regular file"),  # was 'no such file'
    (["describe", "--field", "."], "not a regular file"),
    (["radial", "1s", "--out", "notes.txt/r.png"], "notes.txt is a file, not a folder"),
    (["gallery", "g.toml", "--out", "notes.txt"], "is a file, not a folder"),  # was FileExistsError, 1
])
def test_extreme_sizes_and_odd_files_are_one_line_and_status_2(argv, fragment, tmp_path, capsys,
                                                               monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "notes.txt").write_text("a file, not a folder", encoding="utf-8")
    _gallery_config(tmp_path)
    assert_one_line_error(*run_cli(argv, capsys)[::2], fragment)


def test_a_huge_plane_normal_is_a_direction_not_an_overflow(tmp_path, capsys):
    # (1e300, 1e300, 0) points along (1, 1, 0): its length squared overflows a double, so the
    # normal must be scaled before it is normalised (it was reported as the zero vector)
    from orbitalrender.picture.plane import plane

    p = plane((1e300, 1e300, 0.0))
    assert p.normal == pytest.approx((2 ** -0.5, 2 ** -0.5, 0.0), abs=1e-15)
    status, _, err = run_cli(["section", "2pz", "--normal", "1e300,1e300,0", "--pixels", "32",
                              "--out", tmp_path / "s.png"], capsys)
    assert status == 0 and err == ""


# The command line in a child process whose address space is capped (RLIMIT_AS, as
# `ulimit -v` does) 1 GiB above what it has mapped after loading the command line: a real
# shortage, far below what /proc/meminfo reports free on the machine.
_CAPPED_CLI = """
import resource, sys
from orbitalrender.cli import main
mapped = next(int(ln.split()[1]) * 1024 for ln in open("/proc/self/status") if ln.startswith("VmSize:"))
resource.setrlimit(resource.RLIMIT_AS, (mapped + 2**30, resource.RLIM_INFINITY))
sys.exit(main(sys.argv[1:]))
"""


@pytest.mark.skipif(not Path("/proc/self/status").exists(), reason="needs Linux /proc")
def test_under_an_address_space_cap_the_resolution_offered_really_fits(tmp_path):
    def run(resolution: int) -> subprocess.CompletedProcess:
        argv = ["mesh", "2pz", "--resolution", str(resolution), "--out", str(tmp_path / "m.ply")]
        return subprocess.run([sys.executable, "-c", _CAPPED_CLI, *argv], cwd=REPO, capture_output=True,
                              text=True, timeout=300,
                              env={**os.environ, "PYTHONPATH": str(REPO), "MPLBACKEND": "Agg"})

    refused = run(1024)
    line = assert_one_line_error(refused.returncode, refused.stderr, "1024^3",
                                 "the largest resolution that fits is")
    budget = line.split("but only ")[1].split(" can be used")[0]
    assert budget.endswith("MiB") or float(budget.split()[0]) < 1.0, budget  # the cap, not the machine
    offered = int(line.rsplit(" ", 1)[1])
    assert 64 <= offered < 1024
    made = run(offered)
    assert made.returncode == 0, made.stderr
    assert (tmp_path / "m.ply").stat().st_size > 0
