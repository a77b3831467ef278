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

from .gallery.config import load_config
from .gallery.runner import run_gallery
from .lattice.grid import Box, Lattice
from .lattice.sampler import default_box, sample
from .lattice.userfield import load_field, save_field
from .mesh.export import length_scale, surface_mesh, write_bodies
from .mesh.pipeline import export_mesh
from .mesh.printable import PrintOptions, make_printable, split_by_sign
from .mesh.walls import thin_spots
from .picture.layout import shell_states, small_multiples, time_strip
from .picture.output import figure_metadata, save_figure, write_report
from .picture.radialplot import radial_figure, radial_marks
from .picture.render3d import Camera, figure_3d, render_surfaces
from .picture.section import cross_section, plane, section_figure
from .state.model import State, Term, eigenstate, energy_hartree, real_orbital, superpose
from .state.notation import parse_state
from .state.properties import EigenProperties, SuperpositionProperties, eigen_properties, state_properties
from .surface.extract import extract_surface
from .surface.level import LevelResult, level_for_fraction
from .surface.model import Surface
from .surface.topology import Topology, split_components, topology

__all__ = [
    "__version__",
    "State", "Term", "eigenstate", "real_orbital", "superpose", "energy_hartree", "parse_state",
    "EigenProperties", "SuperpositionProperties", "eigen_properties", "state_properties",
    "Box", "Lattice", "default_box", "sample", "load_field", "save_field",
    "Surface", "LevelResult", "level_for_fraction", "extract_surface",
    "Topology", "topology", "split_components",
    "export_mesh", "length_scale", "surface_mesh", "write_bodies", "PrintOptions", "make_printable",
    "split_by_sign",
    "thin_spots",
    "figure_metadata", "save_figure", "write_report",
    "plane", "cross_section", "section_figure", "radial_figure", "radial_marks",
    "Camera", "render_surfaces", "figure_3d", "small_multiples", "time_strip", "shell_states",
    "load_config", "run_gallery",
]
