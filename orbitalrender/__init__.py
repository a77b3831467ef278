"""orbitalrender: probability-enclosing surfaces, phase-coloured figures and printable meshes
of hydrogen-like one-electron states.

The pipeline is state -> lattice -> surface -> picture or mesh; each step is a
subpackage and its main functions are re-exported here.
"""

__version__ = "0.1.0"

from .lattice.grid import Box, Lattice
from .lattice.sampler import default_box, sample
from .lattice.userfield import load_field, save_field
from .mesh.export import length_scale, surface_mesh, write_bodies
from .mesh.printable import PrintOptions, make_printable, split_by_sign, thin_spots
from .picture.output import figure_metadata, save_figure, write_report
from .picture.radialplot import radial_figure, radial_marks
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
    "length_scale", "surface_mesh", "write_bodies", "PrintOptions", "make_printable", "split_by_sign",
    "thin_spots",
    "figure_metadata", "save_figure", "write_report",
    "plane", "cross_section", "section_figure", "radial_figure", "radial_marks",
]
