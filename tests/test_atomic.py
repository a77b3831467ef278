"""No lost file: every output is written to a temporary name and renamed when complete.

Each test puts a good file at the target, makes the low-level writer fail after it has
written part of the data (as a full disk does: OSError ENOSPC), and checks that the
good file is unchanged and that no temporary file is left beside it.
"""

from __future__ import annotations

import errno
import io
import json
import os
import pathlib
import stat
import subprocess
import sys

import matplotlib.figure
import numpy as np
import pytest
from PIL import Image

from orbitalrender.atomic import atomic_path, check_writable
from orbitalrender.cli import COMMANDS, main

GOOD = b"an earlier good file\n"


def _disk_full(name: str) -> OSError:
    return OSError(errno.ENOSPC, "No space left on device (simulated)", name)


def _write_part(path, data: bytes) -> None:
    """What a writer leaves when the disk fills: the first part of the data."""
    with open(path, "wb") as fh:
        fh.write(data[: max(1, len(data) // 2)])


@pytest.fixture
def fail_writes(monkeypatch):
    """fail_writes(marker): every write of a file whose name contains `marker` (through
    Figure.savefig, PIL Image.save, Path.write_bytes/write_text or numpy.savez) writes
    half of its data and raises OSError ENOSPC.  Returns the list of names that failed."""
    failed: list[str] = []

    def install(marker: str) -> list[str]:
        real_savefig = matplotlib.figure.Figure.savefig
        real_pil_save = Image.Image.save
        real_write_bytes = pathlib.Path.write_bytes
        real_write_text = pathlib.Path.write_text
        real_savez = np.savez

        def hit(target) -> bool:
            return isinstance(target, (str, os.PathLike)) and marker in os.fspath(target)

        def fail(target, data: bytes):
            failed.append(os.fspath(target))
            _write_part(target, data)
            raise _disk_full(os.fspath(target))

        def savefig(self, fname, *args, **kwargs):
            if not hit(fname):
                return real_savefig(self, fname, *args, **kwargs)
            buf = io.BytesIO()
            real_savefig(self, buf, *args, **kwargs)
            fail(fname, buf.getvalue())

        def pil_save(self, fp, format=None, **params):  # noqa: A002 - PIL's own name
            if not hit(fp):
                return real_pil_save(self, fp, format, **params)
            buf = io.BytesIO()
            real_pil_save(self, buf, format or "PNG", **params)
            fail(fp, buf.getvalue())

        def write_bytes(self, data):
            if not hit(self):
                return real_write_bytes(self, data)
            fail(self, bytes(data))

        def write_text(self, data, encoding=None, errors=None, newline=None):
            if not hit(self):
                return real_write_text(self, data, encoding, errors, newline)
            fail(self, data.encode(encoding or "utf-8"))

        def savez(file, *args, **kwds):
            name = getattr(file, "name", file)  # an open file (as the callers pass) or a path
            if not hit(name):
                return real_savez(file, *args, **kwds)
            buf = io.BytesIO()
            real_savez(buf, *args, **kwds)
            if hasattr(file, "write"):
                file.write(buf.getvalue()[: len(buf.getvalue()) // 2])
                failed.append(os.fspath(name))
                raise _disk_full(os.fspath(name))
            fail(name, buf.getvalue())

        monkeypatch.setattr(matplotlib.figure.Figure, "savefig", savefig)
        monkeypatch.setattr(Image.Image, "save", pil_save)
        monkeypatch.setattr(pathlib.Path, "write_bytes", write_bytes)
        monkeypatch.setattr(pathlib.Path, "write_text", write_text)
        monkeypatch.setattr(np, "savez", savez)
        return failed

    return install


def _temporaries(folder: pathlib.Path) -> list[pathlib.Path]:
    """Files that atomic_path names while writing (.NAME.XXXX.partSUFFIX), anywhere below."""
    return [p for p in folder.rglob("*") if ".part" in p.name]


def _run(argv) -> int:
    try:
        return main([str(a) for a in argv])
    except SystemExit as exc:
        return exc.code


# -- atomic_path itself ------------------------------------------------------------------------
def test_a_failed_block_leaves_the_target_and_no_temporary(tmp_path):
    target = tmp_path / "out.txt"
    target.write_bytes(GOOD)
    for exc in (OSError("disk"), KeyboardInterrupt()):
        with pytest.raises(type(exc)), atomic_path(target) as tmp:
            tmp.write_bytes(b"half of the new")
            raise exc
        assert target.read_bytes() == GOOD
        assert _temporaries(tmp_path) == []


def test_a_complete_block_replaces_the_target_with_the_usual_permissions(tmp_path):
    target = tmp_path / "out.txt"
    target.write_bytes(GOOD)
    mask = os.umask(0o022)
    try:
        with atomic_path(target) as tmp:
            assert tmp.parent == tmp_path and tmp != target  # same folder: the rename is atomic
            tmp.write_text("new", encoding="utf-8")
            assert target.read_bytes() == GOOD  # unchanged until the block completes
    finally:
        os.umask(mask)
    assert target.read_text(encoding="utf-8") == "new"
    # 0o666 less the umask, as open() would give (POSIX creat semantics)
    assert stat.S_IMODE(target.stat().st_mode) == 0o644
    assert _temporaries(tmp_path) == []


def test_check_writable_refuses_before_any_work(tmp_path):
    with pytest.raises(FileNotFoundError, match="does not exist"):
        check_writable(tmp_path / "missing" / "x.png")
    with pytest.raises(IsADirectoryError, match="folder"):
        check_writable(tmp_path)
    locked = tmp_path / "locked"
    locked.mkdir()
    locked.chmod(0o500)
    try:
        if not os.access(locked, os.W_OK):  # root can write anywhere
            with pytest.raises(PermissionError, match="not writable"):
                check_writable(locked / "x.png")
    finally:
        locked.chmod(0o700)


# -- every command and format --------------------------------------------------------------------
def _figure(t, name):
    return ["figure", "2pz", "--resolution", "20", "--size", "240x160", "--supersample", "1",
            "--out", t / name]


def _mesh(t, name):
    return ["mesh", "2pz", "--fraction", "0.8", "--resolution", "20", "--out", t / name]


def _section(t, name):
    return ["section", "2pz", "--pixels", "32", "--out", t / name]


def _radial(t, name):
    return ["radial", "2pz", "--out", t / name]


CASES = [
    ("figure", _figure, "f.png", None), ("figure", _figure, "f.svg", None),
    ("figure", _figure, "f.pdf", None),
    ("figure", _figure, "f.png", "f-report.json"),
    ("mesh", _mesh, "m.ply", None), ("mesh", _mesh, "m.obj", None), ("mesh", _mesh, "m.stl", None),
    ("mesh", _mesh, "m.glb", None), ("mesh", _mesh, "m.ply", "m-report.json"),
    ("section", _section, "s.png", None), ("section", _section, "s.pdf", None),
    ("section", _section, "s.png", "s-report.json"),
    ("radial", _radial, "r.png", None), ("radial", _radial, "r.svg", None),
    ("radial", _radial, "r.png", "r-report.json"),
]


@pytest.mark.parametrize("command, argv, name, report", [c for c in CASES if c[0] in COMMANDS])
def test_a_write_failing_midway_keeps_the_earlier_file(command, argv, name, report, tmp_path,
                                                       fail_writes, capsys):
    target = tmp_path / (report or name)
    target.write_bytes(GOOD)
    failed = fail_writes(target.name)
    extra = ["--report", tmp_path / report] if report else []
    status = _run(argv(tmp_path, name) + extra)
    err = capsys.readouterr().err
    assert failed, "the writer was not reached"
    assert status == 1, err  # neither success nor a mistake in the input
    assert "No space left on device" in err and len(err.strip().splitlines()) == 1
    assert target.read_bytes() == GOOD
    assert _temporaries(tmp_path) == []


@pytest.mark.skipif("gallery" not in COMMANDS, reason="no gallery command")
@pytest.mark.parametrize("marker", ["p2.png", "index.html", "p2.png.json", ".npz"])
def test_a_gallery_write_failing_midway_keeps_the_earlier_files(marker, tmp_path, fail_writes, capsys):
    cfg = tmp_path / "g.toml"
    cfg.write_text('[[outputs]]\nname = "p2"\nkind = "radial"\nstates = ["2pz"]\n\n'
                   '[[outputs]]\nname = "m"\nkind = "mesh"\nstate = "2pz"\nresolution = 16\n',
                   encoding="utf-8")
    out = tmp_path / "out"
    out.mkdir()
    earlier = {n: out / n for n in ("p2.png", "index.html", "p2.png.json", "m.stl")}
    for path in earlier.values():
        path.write_bytes(GOOD)
    failed = fail_writes(marker)
    status = _run(["gallery", cfg, "--out", out, "--jobs", "1", "--quiet"])
    capsys.readouterr()
    assert failed, "the writer was not reached"
    assert status != 0
    for name, path in earlier.items():
        if marker in name or (marker == "p2.png" and name == "p2.png.json"):
            assert path.read_bytes() == GOOD, name  # the failed file, or the report of a failed output
    assert _temporaries(out) == []


def test_save_field_failing_midway_keeps_the_earlier_file(tmp_path, fail_writes):
    from orbitalrender.lattice.sampler import sample
    from orbitalrender.lattice.userfield import save_field
    from orbitalrender.state.model import eigenstate

    target = tmp_path / "psi.npz"
    target.write_bytes(GOOD)
    fail_writes(".npz")
    with pytest.raises(OSError, match="No space left"):
        save_field(target, sample(eigenstate(2, 1, 0), 16))
    assert target.read_bytes() == GOOD
    assert _temporaries(tmp_path) == []


def test_gallery_reports_are_valid_json_after_a_run(tmp_path):
    # the complete files that replace earlier ones are whole (parse as JSON)
    if "gallery" not in COMMANDS:
        pytest.skip("no gallery command")
    cfg = tmp_path / "g.toml"
    cfg.write_text('[[outputs]]\nname = "p2"\nkind = "radial"\nstates = ["2pz"]\n', encoding="utf-8")
    (tmp_path / "out").mkdir()
    (tmp_path / "out" / "p2.png.json").write_bytes(GOOD)
    assert _run(["gallery", cfg, "--out", tmp_path / "out", "--jobs", "1", "--quiet"]) == 0
    assert json.loads((tmp_path / "out" / "p2.png.json").read_text(encoding="utf-8"))


# -- one run's outputs: distinct files, no escape through links, replaced as one set -----------
# These run the real command line in a subprocess on real files, folders and symbolic links.
REPO = pathlib.Path(__file__).resolve().parents[1]
QUICK_MESH = ["--fraction", "0.9", "--resolution", "32"]


def _cli(*args, cwd) -> subprocess.CompletedProcess:
    env = dict(os.environ, PYTHONPATH=str(REPO), MPLBACKEND="Agg")
    return subprocess.run([sys.executable, "-m", "orbitalrender", *map(str, args)], cwd=cwd, env=env,
                          capture_output=True, text=True, timeout=300)


def _one_line_status_2(done: subprocess.CompletedProcess, fragment: str) -> None:
    assert done.returncode == 2, done.stderr
    assert len(done.stderr.strip().splitlines()) == 1 and fragment in done.stderr, done.stderr


@pytest.mark.parametrize("argv", [
    ["figure", "2pz", "--out", "same.png", "--report", "same.png"],
    ["figure", "2pz", "--out", "same.png", "--report", "./sub/../same.png"],
    ["mesh", "2pz", *QUICK_MESH, "--out", "same.stl", "--report", "same.stl"],
    ["section", "2pz", "--out", "same.png", "--report", "link/same.png"],
    ["radial", "2pz", "--out", "same.png", "--report", "./same.png"],
])
def test_two_outputs_of_one_run_naming_one_file_are_refused(argv, tmp_path):
    (tmp_path / "sub").mkdir()
    (tmp_path / "link").symlink_to(tmp_path)  # link/same.png is same.png
    (tmp_path / argv[argv.index("--out") + 1]).write_bytes(GOOD)
    done = _cli(*argv, cwd=tmp_path)
    _one_line_status_2(done, "two outputs of this run are the same file")
    assert (tmp_path / argv[argv.index("--out") + 1]).read_bytes() == GOOD
    assert _temporaries(tmp_path) == []


def test_a_symbolic_link_at_the_output_is_not_replaced(tmp_path):
    (tmp_path / "real.png").write_bytes(GOOD)
    (tmp_path / "link.png").symlink_to("real.png")
    done = _cli("radial", "1s", "--out", "link.png", cwd=tmp_path)
    _one_line_status_2(done, "is a symbolic link")
    assert (tmp_path / "link.png").is_symlink() and (tmp_path / "real.png").read_bytes() == GOOD


def test_gallery_writes_do_not_escape_the_output_folder_through_a_link(tmp_path):
    outside = tmp_path / "outside"
    outside.mkdir()
    out = tmp_path / "out"
    out.mkdir()
    (out / "link").symlink_to("../outside")
    cfg = tmp_path / "g.toml"
    cfg.write_text('[[outputs]]\nname = "p"\nkind = "radial"\nstates = ["1s"]\nfile = "link/x.png"\n',
                   encoding="utf-8")
    done = _cli("gallery", cfg, "--out", out, "--quiet", cwd=tmp_path)
    _one_line_status_2(done, "leads outside the output folder")
    assert list(outside.iterdir()) == []


def test_mesh_parts_replace_the_earlier_set_and_remove_its_stale_parts(tmp_path):
    for k in (1, 2, 3, 4):
        (tmp_path / f"lobes_part{k}.stl").write_bytes(GOOD)
    (tmp_path / "lobes_band2.stl").write_bytes(GOOD)
    (tmp_path / "lobes_notes.stl").write_bytes(GOOD)  # not a name the mesh command writes
    done = _cli("mesh", "2pz", *QUICK_MESH, "--size-mm", "40", "--parts", "--out", "lobes.stl",
                cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    names = sorted(p.name for p in tmp_path.iterdir())
    assert names == ["lobes_notes.stl", "lobes_part1.stl", "lobes_part2.stl"]  # 2pz has two lobes
    assert all((tmp_path / n).read_bytes() != GOOD for n in names[1:])


def test_a_mesh_run_failing_midway_keeps_the_whole_earlier_set(tmp_path):
    for k in (1, 3):
        (tmp_path / f"lobes_part{k}.stl").write_bytes(GOOD)
    (tmp_path / "lobes_part2.stl").mkdir()  # the second part cannot be written
    done = _cli("mesh", "2pz", *QUICK_MESH, "--size-mm", "40", "--parts", "--out", "lobes.stl",
                cwd=tmp_path)
    _one_line_status_2(done, "is a folder")
    assert (tmp_path / "lobes_part1.stl").read_bytes() == GOOD  # not replaced by the new part 1
    assert (tmp_path / "lobes_part3.stl").read_bytes() == GOOD
    assert _temporaries(tmp_path) == []


def test_a_gallery_output_failing_after_its_picture_keeps_the_earlier_picture_and_report(tmp_path):
    cfg = tmp_path / "g.toml"
    cfg.write_text('[[outputs]]\nname = "p"\nkind = "radial"\nstates = ["1s"]\n', encoding="utf-8")
    out = tmp_path / "out"
    (out / ".index" / "p.png.png").mkdir(parents=True)  # its thumbnail cannot be written
    (out / "p.png").write_bytes(GOOD)
    (out / "p.png.json").write_bytes(GOOD)
    done = _cli("gallery", cfg, "--out", out, "--quiet", cwd=tmp_path)
    assert done.returncode != 0 and "p.png.png is a folder" in done.stderr, done.stderr
    assert (out / "p.png").read_bytes() == GOOD and (out / "p.png.json").read_bytes() == GOOD
    assert _temporaries(out) == []


def test_a_long_legal_file_name_is_written(tmp_path):
    limit = os.pathconf(tmp_path, "PC_NAME_MAX")
    name = "r" * (limit - len(".png")) + ".png"  # the longest name the folder allows
    done = _cli("radial", "1s", "--dpi", "20", "--out", name, cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    assert (tmp_path / name).stat().st_size > 0 and _temporaries(tmp_path) == []
    too_long = "r" + name
    _one_line_status_2(_cli("radial", "1s", "--out", too_long, cwd=tmp_path), "file name is")
