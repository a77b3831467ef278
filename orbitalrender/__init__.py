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

#: Public name -> the module (below this package) that defines it.  The modules are
#: imported on first use (PEP 562), so ``import orbitalrender`` and the command line's
#: ``--help`` load no heavy library.
_WHERE: dict[str, str] = {
    **dict.fromkeys(("State", "Term", "eigenstate", "real_orbital", "superpose", "energy_hartree"),
                    "state.model"),
    "parse_state": "state.notation",
    **dict.fromkeys(("EigenProperties", "SuperpositionProperties", "eigen_properties",
                     "state_properties"), "state.properties"),
    **dict.fromkeys(("Box", "Lattice"), "lattice.grid"),
    **dict.fromkeys(("default_box", "sample"), "lattice.sampler"),
    **dict.fromkeys(("load_field", "save_field"), "lattice.userfield"),
    "Surface": "surface.model",
    **dict.fromkeys(("LevelResult", "level_for_fraction"), "surface.level"),
    "extract_surface": "surface.extract",
    **dict.fromkeys(("Topology", "topology", "split_components"), "surface.topology"),
    "export_mesh": "mesh.pipeline",
    **dict.fromkeys(("length_scale", "surface_mesh", "write_bodies"), "mesh.export"),
    **dict.fromkeys(("PrintOptions", "make_printable", "split_by_sign", "thin_spots"), "mesh.printable"),
    **dict.fromkeys(("figure_metadata", "save_figure", "write_report"), "picture.output"),
    **dict.fromkeys(("plane", "cross_section", "section_figure"), "picture.section"),
    **dict.fromkeys(("radial_figure", "radial_marks"), "picture.radialplot"),
    **dict.fromkeys(("Camera", "render_surfaces", "figure_3d"), "picture.render3d"),
    **dict.fromkeys(("small_multiples", "time_strip", "shell_states"), "picture.layout"),
    **dict.fromkeys(("FigureOptions", "LayoutOptions", "SectionOptions", "RadialOptions", "MeshOptions",
                     "DescribeOptions", "figure_job", "section_job", "radial_job", "mesh_job",
                     "describe_job"), "jobs"),
    "load_config": "gallery.config",
    "run_gallery": "gallery.runner",
}

__all__ = ["__version__", *_WHERE]


def __getattr__(name: str):
    """Import the module that defines public `name` on first use (PEP 562)."""
    if name not in _WHERE:
        raise AttributeError(f"module 'orbitalrender' has no attribute {name!r}")
    import importlib

    value = getattr(importlib.import_module(f".{_WHERE[name]}", __name__), name)
    globals()[name] = value  # later lookups do not come here again
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
