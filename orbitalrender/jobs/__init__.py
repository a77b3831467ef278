"""Jobs step: every output kind's options (name, default, range, check, help) and the job that makes it.

This layer sits between the front ends (``cli/`` and ``gallery/``) and the
pipeline (``picture/``, ``mesh/`` and below).  For each output kind there is one
frozen options dataclass and one ``*_job`` function:

============  ==================  ======================  =============================
kind          options             job                     command / gallery kind
============  ==================  ======================  =============================
figure        FigureOptions       figure_job              ``figure`` / ``figure``
layout        LayoutOptions       figure_job              ``figure`` / ``layout``
section       SectionOptions      section_job             ``section`` / ``section``
radial        RadialOptions       radial_job              ``radial`` / ``radial``
mesh          MeshOptions         mesh_job                ``mesh`` / ``mesh``
describe      DescribeOptions     describe_job            ``describe`` / (none)
============  ==================  ======================  =============================

The command line's flags (:mod:`orbitalrender.cli.common`) and the gallery's
keys (:mod:`orbitalrender.gallery.config`) are generated from the dataclasses'
fields: names, defaults, ranges, allowed values, help text and the wording of
every refusal come from one place.  Shared groups (:class:`StateOptions`,
:class:`FieldOptions`, :class:`LatticeOptions`, :class:`PictureOptions`,
:class:`FileOptions`) are inherited by every kind that uses them.  Importing this
package loads no heavy library; the jobs import what they use when they run.

Adding an option
----------------
Add ONE field to the options dataclass of the kind (or to a shared group, for
every kind that has it) with :func:`option`, and use it in the job.  Nothing
else: the flag ``--mm-per-a0``, the gallery key ``mm_per_a0``, the help text with
its default, the range check and the guide's test all follow from the field.
For example, a common scale for printed meshes::

    @dataclass(frozen=True)
    class MeshOptions(...):
        ...
        mm_per_a0: float | None = option(
            None, "millimetres per a0, the same for every model (instead of the size in mm)",
            lo=0, lo_open=True, unit="mm")

and in :func:`mesh_job` pass ``options.mm_per_a0`` on to the library.  Then
``orbitalrender mesh 2pz --mm-per-a0 -1 --out a.stl`` says
``--mm-per-a0 must be a number > 0, got -1.0`` and a gallery config says
``demo.toml: output 'p' (outputs[0]): key 'mm_per_a0' must be a number > 0, got -1``.
:func:`option` takes ``type`` (``"number"``, ``"integer"``, ``"text"``, ``"value"``,
``"bool"``, ``"numbers"``, ``"texts"``), ``lo``/``hi`` with ``lo_open``/``hi_open``,
``choices``, ``count``, ``unit``, ``check`` (a library function that raises
ValueError; wrap it in :func:`shared.lazy` if its module is heavy), ``expected``,
``flag``/``key`` (other names on the command line / in configs; ``""`` leaves it
out of one of them, with a reason in the help), ``metavar`` and ``parse`` (command-
line text to value).  A ``bool`` that defaults to True gets a ``--no-NAME`` flag.
Document the option in docs/guide.md (tests/test_docs.py checks the guide against
these definitions).  Options that only go together are checked in the job's
module (e.g. :func:`check_mesh`), naming each option with the front end's name.

Adding an output kind
---------------------
1. Write ``jobs/<kind>.py``: a frozen dataclass inheriting the shared groups it
   needs, with ``STATE_NARGS`` (``"?"``, ``"*"`` or ``"+"``) if it takes STATEs, its
   own fields made with :func:`option`, and a ``<kind>_job(states, options, ...)``
   that computes the output and its metadata (no file writing but the output itself;
   :func:`write.write_picture` writes pictures).
2. Add it to :data:`KINDS` below and re-export it here.
3. Command line: ``cli/<kind>.py`` with ``register`` calling
   :func:`orbitalrender.cli.common.add_command` and ``run(options, args)``, listed in
   ``cli.COMMANDS``.
4. Gallery: add the kind and its suffixes to ``gallery.config.KINDS`` and a drawer in
   ``gallery/produce.py`` that calls the job.
5. A section in docs/guide.md and tests in ``tests/test_jobs_<kind>.py``.

Examples
--------
>>> from orbitalrender.jobs import FigureOptions, build
>>> build(FigureOptions, {"fraction": 0.8, "azimuth_deg": 10}).azimuth_deg
10.0
>>> try:
...     build(FigureOptions, {"supersample": 5})
... except ValueError as exc:
...     print(exc)
supersample must be an integer in [1, 4], got 5
"""

from __future__ import annotations

from .describe import DescribeOptions, describe_job
from .figure import FigureOptions, LayoutOptions, figure_job
from .mesh import MeshOptions, check_mesh, mesh_job
from .option import Option, OptionError, Options, build, option, options_of
from .radial import RadialOptions, radial_job
from .section import SectionOptions, section_job
from .shared import FieldOptions, FileOptions, LatticeOptions, PictureOptions, StateOptions

__all__ = ["KINDS", "Option", "OptionError", "Options", "option", "options_of", "build",
           "StateOptions", "FieldOptions", "LatticeOptions", "PictureOptions", "FileOptions",
           "FigureOptions", "LayoutOptions", "SectionOptions", "RadialOptions", "MeshOptions",
           "DescribeOptions", "figure_job", "section_job", "radial_job", "mesh_job", "describe_job",
           "check_mesh"]

#: Output kind -> its options dataclass.
KINDS: dict[str, type] = {
    "figure": FigureOptions,
    "layout": LayoutOptions,
    "section": SectionOptions,
    "radial": RadialOptions,
    "mesh": MeshOptions,
    "describe": DescribeOptions,
}
