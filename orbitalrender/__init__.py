"""orbitalrender: probability-enclosing surfaces, phase-coloured figures and printable meshes
of hydrogen-like one-electron states.

The pipeline is state -> lattice -> surface -> picture or mesh; each step is a
subpackage and its main functions are re-exported here.  A gallery config runs many
such pipelines at once (:func:`run_gallery`).  See docs/guide.md, section "Python".

Examples
--------
>>> import orbitalrender as orb
>>> state = orb.parse_state("3dz2")
>>> surface = orb.extract_surface(state, 0.9, resolution=40)
>>> orb.topology(surface).components            # two lobes and the ring
3
>>> fig, render = orb.figure_3d(surface, 240, 200, supersample=1)
>>> render.rgba.shape[2], type(fig).__name__
(4, 'Figure')
"""

__version__ = "0.1.0"

import importlib
import os


def _numba_cache_dir() -> None:
    """Point numba's on-disk kernel cache (``NUMBA_CACHE_DIR``, unless the user set it) at a
    per-user folder, ``$XDG_CACHE_HOME/orbitalrender/numba`` (default ``~/.cache``).

    Left to itself numba writes its cache beside the source files: inside an installed
    package that leaves files pip does not know of, and an ``orbitalrender`` folder of cache
    files alone that survives ``pip uninstall`` shadows a later editable install (the
    import then finds an empty namespace package).  numba keys its entries by the source
    file's path and time stamp, so installs in several environments share the folder
    safely.  Nothing is changed when the folder cannot be made.
    """
    if "NUMBA_CACHE_DIR" in os.environ:
        return
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    folder = os.path.join(base, "orbitalrender", "numba")
    try:
        os.makedirs(folder, exist_ok=True)
    except OSError:
        return
    os.environ["NUMBA_CACHE_DIR"] = folder


_numba_cache_dir()  # before any module of this package imports numba

#: Public name -> the module (below this package) that defines it.  The modules are
#: imported on first use (PEP 562), so ``import orbitalrender`` and the light modules
#: that option definitions read load no heavy library.
_EXPORTS: dict[str, str] = {
    "load_config": "gallery.config",
    "run_gallery": "gallery.runner",
    "Box": "lattice.grid", "Lattice": "lattice.grid",
    "Cloud": "lattice.cloud", "Slab": "lattice.cloud", "draw_cloud": "lattice.cloud",
    "parse_slab": "lattice.cloud",
    "default_box": "lattice.sampler", "sample": "lattice.sampler",
    "load_field": "lattice.userfield", "save_field": "lattice.userfield",
    "length_scale": "mesh.export", "surface_mesh": "mesh.export", "write_bodies": "mesh.export",
    "export_mesh": "mesh.pipeline",
    "PrintOptions": "mesh.print_options",
    "make_printable": "mesh.printable", "thin_spots": "mesh.walls",
    "split_by_sign": "mesh.split",
    "shell_states": "picture.layout", "small_multiples": "picture.layout", "time_strip": "picture.layout",
    "time_labels": "picture.layout", "beat_period_au": "picture.layout",
    "draw_axis_triad": "picture.triad",
    "figure_metadata": "picture.output", "save_figure": "picture.output", "write_report": "picture.output",
    "radial_figure": "picture.radialplot", "radial_marks": "picture.radialplot",
    "Camera": "picture.camera",
    "figure_3d": "picture.compose", "surface_title": "picture.compose",
    "render_cloud": "picture.cloud", "cloud_figure": "picture.cloud", "cloud_report": "picture.cloud",
    "encode_ply_points": "mesh.ply",
    "render_surfaces": "picture.scene",
    "plane": "picture.plane",
    "cross_section": "picture.section",
    "section_lines": "picture.nodal",
    "section_figure": "picture.section_figure", "section_title": "picture.section_figure",
    "State": "state.model", "Term": "state.model", "eigenstate": "state.model",
    "energy_hartree": "state.model", "real_orbital": "state.model", "superpose": "state.model",
    "parse_state": "state.notation", "conditions_label": "state.notation",
    "parse_states": "state.notation",
    "hybrid_member": "state.hybrid", "hybrid_members": "state.hybrid",
    "hybrid_coefficients": "state.hybrid",
    "EigenProperties": "state.properties", "SuperpositionProperties": "state.properties",
    "eigen_properties": "state.properties", "state_properties": "state.properties",
    "extract_surface": "surface.extract",
    "LevelResult": "surface.level", "level_for_fraction": "surface.level",
    "Surface": "surface.model",
    "Topology": "surface.topology", "split_components": "surface.topology", "topology": "surface.topology",
    **dict.fromkeys(("FigureOptions", "LayoutOptions", "SectionOptions", "RadialOptions", "MeshOptions",
                     "DescribeOptions", "figure_job", "section_job", "radial_job", "mesh_job",
                     "describe_job"), "jobs"),
}


def __getattr__(name: str):
    module = _EXPORTS.get(name)
    if module is None:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(importlib.import_module(f".{module}", __name__), name)
    globals()[name] = value  # later look-ups skip this function
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_EXPORTS))


__all__ = [
    "__version__",
    "State", "Term", "eigenstate", "real_orbital", "superpose", "energy_hartree", "parse_state",
    "conditions_label",
    "parse_states", "hybrid_member", "hybrid_members", "hybrid_coefficients",
    "EigenProperties", "SuperpositionProperties", "eigen_properties", "state_properties",
    "Box", "Lattice", "default_box", "sample", "load_field", "save_field",
    "Cloud", "Slab", "draw_cloud", "parse_slab",
    "Surface", "LevelResult", "level_for_fraction", "extract_surface",
    "Topology", "topology", "split_components",
    "export_mesh", "length_scale", "surface_mesh", "write_bodies", "PrintOptions", "make_printable",
    "split_by_sign",
    "thin_spots", "encode_ply_points",
    "figure_metadata", "save_figure", "write_report",
    "plane", "cross_section", "section_lines", "section_figure", "section_title", "radial_figure",
    "radial_marks",
    "Camera", "render_surfaces", "figure_3d", "surface_title", "small_multiples", "time_strip",
    "time_labels", "beat_period_au", "draw_axis_triad", "shell_states",
    "render_cloud", "cloud_figure", "cloud_report",
    "load_config", "run_gallery",
    "FigureOptions", "LayoutOptions", "SectionOptions", "RadialOptions", "MeshOptions", "DescribeOptions",
    "figure_job", "section_job", "radial_job", "mesh_job", "describe_job",
]
