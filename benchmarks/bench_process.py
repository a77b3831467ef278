"""Benchmark of whole processes: what a user waits for, from the command line to the file.

Ours: ``python -m orbitalrender mesh N,L,M --fraction F --resolution 256 --out X.ply`` and
``python -m orbitalrender figure 3,2,0 --fraction F --resolution 200 --out X.png``, each a
fresh process (imports, compiled-kernel cache loads, level, sampling, marching cubes,
exact vertex psi, report, writing).

Baselines, the scripts a practitioner writes by hand (``_MESH_SCRIPT`` and
``_FIGURE_SCRIPT`` below), also fresh processes: psi on the whole box with scipy
(``bench_sampling.baseline``: meshgrid, ``eval_genlaguerre``, ``sph_harm_y``), |psi|^2,
``np.sort`` of every density
and a cumulative sum times the voxel volume for the level, skimage marching cubes, and
trimesh to write the PLY; the figure script instead draws the mesh flat-shaded with
matplotlib's ``Poly3DCollection`` and saves a PNG.  They get the same box as ours (the
half width is passed on their command line) and the same N.

Runs alternate (ours, baseline, ours, ...) so that a change of load on a shared machine
hits both; medians of wall time are compared.  Peak memory is each child's peak resident
set, ``ru_maxrss`` from ``os.wait4``.

Also printed, in this process: the report's share of the surface step (``surface_report``
against ``extract_surface`` at N = 256), the time and enclosed-fraction error of the
two-centre level (against the dense 320 x 96 x 192 Becke grid the rule replaced), and
with ``--cold`` a ``figure`` right after a fresh install (a new virtual environment in
/tmp where ``pip install --no-deps`` installs orbitalrender from this source tree; the
other dependencies come from this interpreter's environment through a .pth file) against
the second, warm run; the environment is deleted afterwards.

Run (from the repository root):
    python benchmarks/bench_process.py [--repeat 3] [--cold]
"""

from __future__ import annotations

import argparse
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

_COMMON = r'''
import sys
import numpy as np
from skimage.measure import marching_cubes

sys.path.insert(0, "benchmarks")
from bench_sampling import baseline  # psi on the whole box with scipy, the usual way

n, l, m = (int(v) for v in sys.argv[1].split(","))
fraction, N, half, out = float(sys.argv[2]), int(sys.argv[3]), float(sys.argv[4]), sys.argv[5]
h = 2.0 * half / (N - 1)
density = np.abs(baseline(n, l, m, N, half)) ** 2
ordered = np.sort(density, axis=None)[::-1]
level = ordered[np.searchsorted(np.cumsum(ordered) * h**3, fraction)]
verts, faces, normals, _ = marching_cubes(density, level, spacing=(h, h, h))
verts -= half
'''

_MESH_SCRIPT = _COMMON + r'''
import trimesh
trimesh.Trimesh(verts, faces, vertex_normals=normals, process=False).export(out)
'''

_FIGURE_SCRIPT = _COMMON + r'''
import matplotlib
matplotlib.use("Agg")
import matplotlib.pyplot as plt
from mpl_toolkits.mplot3d.art3d import Poly3DCollection
tri = verts[faces]
normal = np.cross(tri[:, 1] - tri[:, 0], tri[:, 2] - tri[:, 0])
normal /= np.linalg.norm(normal, axis=1, keepdims=True) + 1e-300
shade = 0.3 + 0.7 * np.clip(normal @ np.array([0.4, -0.4, 0.8]) / 1.0, 0, 1)
fig = plt.figure(figsize=(6, 6), dpi=100)
axes = fig.add_subplot(projection="3d")
axes.add_collection3d(Poly3DCollection(tri, facecolors=plt.cm.viridis(shade), linewidths=0))
for set_lim in (axes.set_xlim, axes.set_ylim, axes.set_zlim):
    set_lim(-half, half)
fig.savefig(out)
'''


def _child(argv: list[str], env: dict | None = None) -> tuple[float, float]:
    """(wall s, peak RSS MiB) of one child process, which must succeed."""
    t0 = time.perf_counter()
    proc = subprocess.Popen(argv, cwd=ROOT, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    _, status, usage = os.wait4(proc.pid, 0)
    wall = time.perf_counter() - t0
    err = proc.stderr.read().decode(errors="replace")
    proc.stderr.close()
    proc.returncode = os.waitstatus_to_exitcode(status)
    if proc.returncode != 0:
        raise RuntimeError(f"{' '.join(argv)} failed ({proc.returncode}):\n{err}")
    return wall, usage.ru_maxrss / 1024.0  # Linux: kiB


def _env() -> dict:
    env = dict(os.environ, MPLBACKEND="Agg")
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    return env


def _half_width(label: str, fraction: float, resolution: int) -> float:
    """Half width (a0) of the cube ours samples, so the baseline gets the same box."""
    sys.path.insert(0, str(ROOT))
    from orbitalrender.state.notation import parse_state
    from orbitalrender.surface.extract import surface_box
    from orbitalrender.surface.level import level_for_fraction

    state = parse_state(label)
    return surface_box(state, level_for_fraction(state, fraction).level, resolution).half_width_a0


def compare(kind: str, label: str, fraction: float, resolution: int, repeat: int, folder: Path) -> None:
    half = _half_width(label, fraction, resolution)
    suffix = ".ply" if kind == "mesh" else ".png"
    ours = [sys.executable, "-m", "orbitalrender", kind, label, "--fraction", str(fraction),
            "--resolution", str(resolution), "--out", str(folder / f"ours{suffix}")]
    script = _MESH_SCRIPT if kind == "mesh" else _FIGURE_SCRIPT
    theirs = [sys.executable, "-c", script, label, str(fraction), str(resolution), repr(half),
              str(folder / f"theirs{suffix}")]
    env = _env()
    _child(ours, env)  # compiled kernels cached, files in the page cache
    runs = {"ours": [], "script": []}
    for _ in range(repeat):
        runs["ours"].append(_child(ours, env))
        runs["script"].append(_child(theirs, env))
    t_o, t_s = (statistics.median(w for w, _ in runs[k]) for k in ("ours", "script"))
    m_o, m_s = (statistics.median(m for _, m in runs[k]) for k in ("ours", "script"))
    print(f"{kind:<7}{label:<8}N={resolution:<5}ours {t_o:6.2f} s {m_o:7.0f} MiB   script {t_s:6.2f} s "
          f"{m_s:7.0f} MiB   speed-up {t_s / t_o:5.2f}x   memory ours/script {m_o / m_s:5.2f}")


def report_share(label: str, fraction: float, resolution: int, repeat: int) -> None:
    sys.path.insert(0, str(ROOT))
    from orbitalrender.mesh.export import length_scale, surface_report
    from orbitalrender.state.notation import parse_state
    from orbitalrender.surface.extract import extract_surface

    state = parse_state(label)
    extract_surface(state, fraction, resolution=32)  # warm-up
    surf_t, rep_t = [], []
    for _ in range(repeat):
        t0 = time.process_time()
        surface = extract_surface(state, fraction, resolution=resolution)
        t1 = time.process_time()
        factor, unit = length_scale(surface.vertices_a0)
        surface_report(surface, factor, unit)
        surf_t.append(t1 - t0)
        rep_t.append(time.process_time() - t1)
    s, r = statistics.median(surf_t), statistics.median(rep_t)
    print(f"report  {label:<8}N={resolution:<5}surface {s:6.3f} s CPU, report {r:6.3f} s CPU: "
          f"{100 * r / s:4.1f} % of the surface step ({len(surface.faces)} faces)")


def two_centre(label: str, fraction: float) -> None:
    sys.path.insert(0, str(ROOT))
    from orbitalrender.state.notation import parse_state
    from orbitalrender.surface.level import _line_jumps, _smoothed_mass, _space_lines, level_for_fraction

    state = parse_state(label)
    t0 = time.perf_counter()
    level = level_for_fraction(state, fraction).level
    fast = time.perf_counter() - t0
    t0 = time.perf_counter()
    lines, mass = _space_lines(state, (320, 96, 192), None)
    error = _smoothed_mass(lines, mass, _line_jumps(lines), level) - fraction
    dense = time.perf_counter() - t0
    print(f"level   {label}  F={fraction}: {fast:5.2f} s wall; enclosed fraction on the dense grid "
          f"minus F = {error:+.1e} (dense grid alone {dense:5.1f} s)")


def cold_figure(folder: Path) -> None:
    venv = folder / "fresh"
    subprocess.run([sys.executable, "-m", "venv", str(venv)], check=True)
    python = str(venv / "bin" / "python")

    def purelib(exe: str) -> str:
        return subprocess.run([exe, "-c", "import sysconfig; print(sysconfig.get_paths()['purelib'])"],
                              check=True, capture_output=True, text=True).stdout.strip()

    subprocess.run([python, "-m", "pip", "install", "-q", "--no-deps", str(ROOT)], check=True, cwd=folder)
    (Path(purelib(python)) / "zz_shared_dependencies.pth").write_text(purelib(sys.executable) + "\n")
    env = dict(os.environ, MPLBACKEND="Agg")
    env.pop("PYTHONPATH", None)
    env.pop("NUMBA_CACHE_DIR", None)
    argv = [python, "-m", "orbitalrender", "figure", "3,2,0", "--fraction", "0.9", "--resolution", "200",
            "--out", str(folder / "cold.png")]
    cold = _timed(argv, folder, env)
    warm = statistics.median(_timed(argv, folder, env) for _ in range(3))
    print(f"figure right after install (fresh numba cache) {cold:6.2f} s; warm {warm:6.2f} s "
          f"(median of 3)")


def _timed(argv, folder, env) -> float:
    t0 = time.perf_counter()
    subprocess.run(argv, cwd=folder, env=env, check=True)
    return time.perf_counter() - t0


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--fraction", type=float, default=0.9)
    parser.add_argument("--cold", action="store_true", help="also time a figure right after a fresh install")
    args = parser.parse_args()
    print(f"load average at start {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores")
    with tempfile.TemporaryDirectory(prefix="bench_process_") as tmp:
        folder = Path(tmp)
        for label in ("3,2,0", "4,3,1"):
            compare("mesh", label, args.fraction, 256, args.repeat, folder)
        compare("figure", "3,2,0", args.fraction, 200, args.repeat, folder)
        report_share("3,2,0", args.fraction, 256, args.repeat)
        two_centre("1s@(0,0,-1) + 1s@(0,0,1)", args.fraction)
        two_centre("2px@(0,0,-1.5) - 2px@(0,0,1.5)", 0.8)
        if args.cold:
            cold_figure(folder)
        shutil.rmtree(folder / "fresh", ignore_errors=True)
    print(f"load average at end {os.getloadavg()[0]:.1f}")


if __name__ == "__main__":
    main()
