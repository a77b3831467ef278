"""Real faults during a gallery run in a subprocess: a worker killed with SIGKILL (once, and
every time), and SIGINT or SIGTERM to the main process.

The worker processes are found as the grandchildren of the gallery's process (its child
is the forkserver, which forks the workers), by reading parent pids from /proc (Linux).
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import textwrap
import threading
import time
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]
pytestmark = pytest.mark.skipif(not Path("/proc/self/stat").exists(), reason="needs Linux /proc")

FOUR_OUTPUTS = """
[defaults]
resolution = 40
fraction = 0.8
supersample = 1
width_px = 240
height_px = 200

[[outputs]]
name = "a"
kind = "figure"
state = "2pz"

[[outputs]]
name = "b"
kind = "figure"
state = "3dz2"

[[outputs]]
name = "c"
kind = "figure"
state = "2,1,1"

[[outputs]]
name = "d"
kind = "radial"
states = ["2s"]
dpi = 40
"""


def _children() -> dict[int, list[int]]:
    kids: dict[int, list[int]] = {}
    for entry in Path("/proc").iterdir():
        if entry.name.isdigit():
            try:
                stat = (entry / "stat").read_text()
            except OSError:
                continue
            ppid = int(stat.rsplit(")", 1)[1].split()[1])
            kids.setdefault(ppid, []).append(int(entry.name))
    return kids


def _workers(pid: int) -> list[int]:
    kids = _children()
    return [w for child in kids.get(pid, []) for w in kids.get(child, [])]


def _alive(pid: int) -> bool:
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except OSError:
        return False
    return state != "Z"


def _start(tmp: Path, text: str = FOUR_OUTPUTS, *extra: str) -> tuple[subprocess.Popen, Path]:
    cfg = tmp / "g.toml"
    cfg.write_text(textwrap.dedent(text), encoding="utf-8")
    out = tmp / "out"
    env = {**os.environ, "MPLBACKEND": "Agg"}
    proc = subprocess.Popen([sys.executable, "-m", "orbitalrender", "gallery", str(cfg), "--out", str(out),
                             "--jobs", "2", *extra], cwd=REPO, env=env, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True)
    return proc, out


def _wait_for_workers(proc: subprocess.Popen, count: int = 1) -> list[int]:
    for _ in range(6000):  # a guard against a hang (10 min), not a timing check
        found = _workers(proc.pid)
        if len(found) >= count or proc.poll() is not None:
            return found
        time.sleep(0.1)
    raise AssertionError("no worker process appeared")


def _temporaries(out: Path) -> list[Path]:
    return [p for p in out.rglob("*") if ".part" in p.name]


# a three-centre state: its level needs the 3D quadrature, some seconds of work against
# well under a second for each of the others, so it is still running when the others finish
SLOW_FIFTH = FOUR_OUTPUTS + """
[[outputs]]
name = "e"
kind = "figure"
state = "1s@(0,0,0) + 1s@(2,0,0) + 1s@(0,2,0)"
"""


def test_a_worker_killed_once_costs_nothing_but_a_warning(tmp_path):
    proc, out = _start(tmp_path, SLOW_FIFTH)
    first = proc.stderr.readline()  # a small task done: the slow one is still being computed
    assert first.startswith("[1/") and "for e" not in first, first
    victims = _wait_for_workers(proc, 2)
    for victim in victims:  # all of them, so the worker busy with "e" is certainly among them
        os.kill(victim, signal.SIGKILL)
    stdout, rest = proc.communicate(timeout=600)
    err = first + rest
    assert proc.returncode == 0, err
    assert "made 5 of 5 outputs" in stdout
    assert "warning: a worker process ended unexpectedly" in err
    assert all((out / f"{n}.png").is_file() for n in "abcde")
    assert 'class="card failed"' not in (out / "index.html").read_text()
    assert _temporaries(out) == []


def test_a_worker_killed_every_time_fails_its_outputs_and_the_index_says_so(tmp_path):
    proc, out = _start(tmp_path, FOUR_OUTPUTS, "--quiet")
    stop = threading.Event()

    def killer() -> None:  # end every worker as soon as it appears, until the run is over
        while not stop.is_set():
            for w in _workers(proc.pid):
                try:
                    os.kill(w, signal.SIGKILL)
                except ProcessLookupError:
                    pass
            time.sleep(0.02)

    thread = threading.Thread(target=killer, daemon=True)
    thread.start()
    try:
        stdout, err = proc.communicate(timeout=600)
    finally:
        stop.set()
        thread.join()
    assert proc.returncode == 1, err
    lines = err.strip().splitlines()
    failed = [ln for ln in lines if ": error: output " in ln]
    assert sorted(ln.split("'")[1] for ln in failed) == ["a", "b", "c", "d"]
    assert all("worker process" in ln and "Traceback" not in ln for ln in failed)
    index = (out / "index.html").read_text()
    assert index.count('class="card failed"') == 4
    assert "made 0 of 4 outputs" in stdout


SLOW = """
[defaults]
resolution = 128
fraction = 0.9
width_px = 900
height_px = 800
""" + "".join(f"""
[[outputs]]
name = "{label}"
kind = "figure"
state = "{label}"
""" for label in ("3dz2", "4fxyz", "3dxy", "4fz3", "3px", "4dz2"))


#: The two signals that stop a run: each with its exit status and the one line on stderr.
STOP_SIGNALS = [
    (signal.SIGINT, 130, "orbitalrender: interrupted"),
    (signal.SIGTERM, 143, "orbitalrender gallery: terminated"),
]


@pytest.mark.parametrize("sig, status, line", STOP_SIGNALS)
def test_sigint_or_sigterm_stops_the_workers_at_once_with_one_line(tmp_path, sig, status, line):
    proc, out = _start(tmp_path, SLOW, "--quiet")
    workers = _wait_for_workers(proc, 2)
    time.sleep(1.0)  # let them start computing
    assert proc.poll() is None, "the run ended before it could be interrupted"
    t0 = time.monotonic()
    proc.send_signal(sig)
    stdout, err = proc.communicate(timeout=600)
    print(f"exit {time.monotonic() - t0:.2f} s after signal {sig}")  # measured, not asserted
    assert proc.returncode == status
    assert err.strip().splitlines() == [line]
    for _ in range(100):  # a guard: the workers are ended before the main process returns
        if not any(_alive(w) for w in workers):
            break
        time.sleep(0.05)
    assert not any(_alive(w) for w in workers)
    assert _temporaries(out) == []
    # the work queued behind the running tasks was dropped, not finished first: of the six
    # surfaces, those done before the interrupt are in the cache, and no output was drawn
    assert len(list((out / ".cache" / "surface").glob("*.npz"))) < 6
    assert list(out.glob("*.png")) == []


# one output drawn in well under a second, one that takes some seconds to draw (4000 px square)
QUICK_THEN_LARGE = """
[defaults]
resolution = 40
fraction = 0.8

[[outputs]]
name = "quick"
kind = "figure"
state = "1s"
width_px = 240
height_px = 200

[[outputs]]
name = "large"
kind = "figure"
state = "3dz2"
width_px = 4000
height_px = 4000
"""


@pytest.mark.parametrize("sig, status, line", STOP_SIGNALS)
def test_workers_that_have_drawn_leave_nothing_for_the_resource_tracker_to_report(tmp_path, sig, status,
                                                                                  line):
    # a worker that has drawn a picture has started numba's parallel threads; stopped by a
    # signal, it must leave no named semaphore, or multiprocessing's resource tracker adds
    # "There appear to be 2 leaked semaphore objects to clean up" (two lines) after the user's line
    proc, out = _start(tmp_path, QUICK_THEN_LARGE)
    seen = []
    for _ in range(10):  # four progress lines at most; a guard against reading forever
        seen.append(proc.stderr.readline())
        if "drawing: quick.png" in seen[-1] or not seen[-1]:
            break
    assert "drawing: quick.png" in seen[-1], seen
    assert proc.poll() is None, "the large picture was drawn before the run could be interrupted"
    proc.send_signal(sig)
    _, rest = proc.communicate(timeout=600)
    assert proc.returncode == status
    assert rest.strip().splitlines() == [line]
    assert _temporaries(out) == []
