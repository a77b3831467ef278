"""Benchmark of the mesh step: export time and file size per format, and print preparation, against
the time of the surface itself (sampling + level + marching cubes + exact vertex psi) in the same run.

Target: encoding and writing a file must not cost more than making the surface.  The reload check
that the command line adds (trimesh reads the file back before it replaces an earlier one) is
timed too, on its own line.

Run (from the repository root, with the package installed or PYTHONPATH=.):
    python benchmarks/bench_mesh.py [--resolution 200] [--state 3,2,0] [--fraction 0.9]
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

from orbitalrender.mesh.export import MESH_SUFFIXES, length_scale, surface_mesh, write_bodies
from orbitalrender.mesh.print_options import PrintOptions
from orbitalrender.mesh.printable import make_printable, require_single_solid
from orbitalrender.mesh.walls import thin_spots
from orbitalrender.state.notation import parse_state
from orbitalrender.surface.extract import extract_surface


def _best_of(repeat: int, fn):
    """(shortest wall time in s, last result) over `repeat` calls."""
    best, result = float("inf"), None
    for _ in range(repeat):
        t0 = time.perf_counter()
        result = fn()
        best = min(best, time.perf_counter() - t0)
    return best, result


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--state", default="3,2,0")
    parser.add_argument("--resolution", type=int, default=200)
    parser.add_argument("--fraction", type=float, default=0.9)
    parser.add_argument("--size-mm", type=float, default=60.0)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()

    state = parse_state(args.state)
    t_surface, surface = _best_of(args.repeat, lambda: extract_surface(state, args.fraction, args.resolution))
    print(f"state {args.state}, F = {args.fraction}, N = {args.resolution}: "
          f"{len(surface.vertices_a0)} vertices, {len(surface.faces)} faces")
    print(f"{'step':<36}{'time s':>9}{'/ surface':>11}{'size MiB':>10}")
    print(f"{'surface (extract_surface)':<36}{t_surface:9.3f}{1.0:11.2f}{'':>10}")
    worst = 0.0
    with tempfile.TemporaryDirectory() as folder:
        for suffix in MESH_SUFFIXES:
            path = Path(folder) / f"bench{suffix}"
            for verify in (False, True):
                def export(path=path, verify=verify):
                    return write_bodies(path, [surface_mesh(surface)], comment=args.state, units="a0",
                                        verify=verify)

                t, _ = _best_of(args.repeat, export)
                if not verify:
                    worst = max(worst, t / t_surface)
                step = f"export {suffix}" + (" + reload check" if verify else " (encode, write)")
                print(f"{step:<36}{t:9.3f}{t / t_surface:11.2f}{path.stat().st_size / 2**20:10.2f}")

        factor, _ = length_scale(surface.vertices_a0, size_mm=args.size_mm)
        options = PrintOptions()

        def printable():
            model = make_printable(surface_mesh(surface, factor), options)
            write_bodies(Path(folder) / "print.stl", [model.mesh], check=require_single_solid)
            return model

        t_print, model = _best_of(args.repeat, printable)
        print(f"{'printable (join, write, check)':<36}{t_print:9.3f}{t_print / t_surface:11.2f}"
              f"{(Path(folder) / 'print.stl').stat().st_size / 2**20:10.2f}")
        t_walls, walls = _best_of(args.repeat, lambda: thin_spots(model.mesh, options.min_thickness_mm))
        t_gaps, _ = _best_of(args.repeat, lambda: thin_spots(model.mesh, options.min_gap_mm, "gap"))
        print(f"{'wall check (4000 rays)':<36}{t_walls:9.3f}{t_walls / t_surface:11.2f}")
        print(f"{'gap check (4000 rays)':<36}{t_gaps:9.3f}{t_gaps / t_surface:11.2f}")
    print(f"joined {model.parts_joined} pieces into {len(model.mesh.faces)} faces; "
          f"walls under {options.min_thickness_mm} mm at {walls.below} of {walls.checked} sampled points")
    verdict = "met" if worst <= 1.0 else "NOT met"
    print(f"target (encoding and writing any format <= the surface's time): {verdict}, "
          f"worst ratio {worst:.2f}")


if __name__ == "__main__":
    main()
