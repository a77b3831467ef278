"""Benchmark of the picture step: our 3D render against matplotlib's Poly3DCollection.

The case: the F = 0.9 surface of |3 2 0> from extract_surface at lattice resolution
N = 200 and N = 256, drawn into a 1600 x 1600 px PNG.

* ours: render_surfaces (z-buffer, Phong-interpolated normals, Blinn-Phong light,
  phase hue, 3 x 3 supersampling) and the PNG written with matplotlib.image.imsave;
* baseline: the same triangles as one Poly3DCollection in an mplot3d axes, each face
  in the flat phase colour of its first vertex (no lighting, painter's sorting, no
  antialiasing), a 16 x 16 in figure at 100 dpi, savefig to PNG.

matplotlib draws on one thread; our banded pass uses the cores numba is given
(NUMBA_NUM_THREADS).  Two ratios are printed, each the best of --repeats runs: of
CPU time (``time.process_time``, all threads added up: the work done) and of
wall-clock time (what a user waits; on a shared machine it also counts time spent
waiting for a core).  The numba kernels are compiled (or loaded from their cache)
by a small warm-up render before any timing.

Run:  python benchmarks/bench_render.py [--sizes 200 256] [--repeats 2] [--pixels 1600]
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

import matplotlib

matplotlib.use("Agg")

import numpy as np  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402
from matplotlib.image import imread, imsave  # noqa: E402
from mpl_toolkits.mplot3d.art3d import Poly3DCollection  # noqa: E402

from orbitalrender.colormap import psi_to_rgb  # noqa: E402
from orbitalrender.picture.camera import Camera  # noqa: E402
from orbitalrender.picture.scene import render_surfaces  # noqa: E402
from orbitalrender.state.model import eigenstate  # noqa: E402
from orbitalrender.surface.extract import extract_surface  # noqa: E402

CAMERA = Camera(azimuth_deg=35.0, elevation_deg=20.0)


#: mplot3d zoom of the baseline's axes box, chosen so that its surface covers about as many
#: pixels as ours (both coverages are printed, so the comparison can be checked).
BASELINE_ZOOM = 1.57


def ours(surface, pixels: int, path: Path) -> None:
    render = render_surfaces(surface, pixels, pixels, camera=CAMERA)
    imsave(path, np.round(render.rgba * 255).astype(np.uint8))


def baseline(surface, pixels: int, path: Path) -> None:
    dpi = 100
    fig = Figure(figsize=(pixels / dpi, pixels / dpi), dpi=dpi)
    ax = fig.add_axes((0, 0, 1, 1), projection="3d")
    v = surface.vertices_a0
    colours = psi_to_rgb(surface.psi[surface.faces[:, 0]])
    ax.add_collection3d(Poly3DCollection(v[surface.faces], facecolors=colours, edgecolors="none"))
    lo, hi = v.min(), v.max()
    ax.set_xlim(lo, hi)
    ax.set_ylim(lo, hi)
    ax.set_zlim(lo, hi)
    ax.set_box_aspect((1, 1, 1), zoom=BASELINE_ZOOM)
    ax.view_init(elev=CAMERA.elevation_deg, azim=CAMERA.azimuth_deg)
    ax.set_axis_off()
    fig.savefig(path, dpi=dpi)


def coverage(path: Path) -> float:
    """Fraction of pixels that are not the white background."""
    rgb = imread(path)[..., :3].astype(float)
    rgb = rgb / 255.0 if rgb.max() > 1.0 else rgb
    return float(np.mean(np.any(rgb < 0.98, axis=2)))


def _best(fn, repeats: int, *args) -> tuple[float, float]:
    cpu, wall = [], []
    for _ in range(repeats):
        c0, w0 = time.process_time(), time.perf_counter()
        fn(*args)
        cpu.append(time.process_time() - c0)
        wall.append(time.perf_counter() - w0)
    return min(cpu), min(wall)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=[200, 256])
    parser.add_argument("--repeats", type=int, default=2)
    parser.add_argument("--pixels", type=int, default=1600)
    args = parser.parse_args()
    state = eigenstate(3, 2, 0)
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp)
        warm = extract_surface(state, 0.9, resolution=32)
        ours(warm, 64, out / "warm.png")
        print(f"{'N':>5} {'triangles':>10} {'ours cpu s':>11} {'baseline cpu s':>15} {'ratio':>7}"
              f" {'ours wall s':>12} {'baseline wall s':>16} {'ratio':>7} {'coverage ours/base':>19}")
        for n in args.sizes:
            surface = extract_surface(state, 0.9, resolution=n)
            c_ours, w_ours = _best(ours, args.repeats, surface, args.pixels, out / "ours.png")
            c_base, w_base = _best(baseline, args.repeats, surface, args.pixels, out / "base.png")
            cover = f"{coverage(out / 'ours.png'):.3f}/{coverage(out / 'base.png'):.3f}"
            print(f"{n:>5} {len(surface.faces):>10} {c_ours:>11.2f} {c_base:>15.2f} "
                  f"{c_ours / c_base:>7.3f} {w_ours:>12.2f} {w_base:>16.2f} {w_ours / w_base:>7.3f} "
                  f"{cover:>19}", flush=True)
    print("ratio = ours / baseline, CPU time and wall-clock time (target: at most 0.5)")


if __name__ == "__main__":
    main()
