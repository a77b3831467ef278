"""Cloud pictures, the cloud report and the PLY point cloud."""

import io

import numpy as np
import pytest
import trimesh

import orbitalrender as orb
from orbitalrender.colormap import psi_to_rgb, sign_colours
from orbitalrender.lattice.cloud import Slab, draw_cloud, parse_slab
from orbitalrender.mesh.ply import encode_ply_points
from orbitalrender.picture.cloud import cloud_figure, cloud_report, point_colours, render_cloud


def test_2pz_dots_are_positive_above_and_negative_below():
    # Y_1^0 ~ cos(theta) > 0 for z > 0 (Condon-Shortley; any handbook of spherical harmonics).
    cloud = draw_cloud(orb.parse_state("2pz"), 20_000, seed=1)
    r = render_cloud(cloud, 80, 80, camera=orb.Camera(azimuth_deg=0, elevation_deg=0),
                     phase_map="sign")
    pos, neg = np.array(sign_colours()["positive"]), np.array(sign_colours()["negative"])
    top, bottom = r.rgba[:35, :, :3].reshape(-1, 3), r.rgba[45:, :, :3].reshape(-1, 3)
    for part, near, far in ((top, pos, neg), (bottom, neg, pos)):
        px = part[np.linalg.norm(part - 1.0, axis=1) > 0.3]  # inked: away from the white paper
        assert len(px) > 50
        assert np.mean(np.linalg.norm(px - near, axis=1) < np.linalg.norm(px - far, axis=1)) > 0.99


def test_point_colours_follow_the_phase_map():
    psi = np.array([1.0, 1j, -1.0])
    assert np.allclose(point_colours(psi, "uniform"), psi_to_rgb(psi))


def test_slab_keeps_only_its_points_and_is_checked_against_the_box():
    state = orb.parse_state("3dz2")
    cloud = draw_cloud(state, 5000, seed=2)
    slab = parse_slab("y = 0, 0.5")
    rep = cloud_report(cloud, 0.9, slab)
    assert rep["points_in_slab"] == int(np.sum(np.abs(cloud.points_a0[:, 1]) <= 0.5))
    empty = render_cloud(cloud, 40, 40, slab=Slab("y", 1e4, 0.5))
    assert np.allclose(empty.rgba[..., :3], 1.0)  # nothing but paper
    slab.check_within(orb.default_box(state))
    with pytest.raises(ValueError, match="outside the box"):
        Slab("z", 500.0, 1.0).check_within(orb.default_box(state))
    for bad in ["z", "w=0,1", "z=0", "z=0,-1", "z=a,1", "z=nan,1"]:
        with pytest.raises(ValueError, match="slab"):
            parse_slab(bad)


def test_report_share_inside_the_surface_and_figure():
    cloud = draw_cloud(orb.parse_state("2pz"), 20_000, seed=3)
    rep = cloud_report(cloud, 0.8)
    # binomial standard error sqrt(F (1 - F) / N)
    assert rep["standard_error"] == pytest.approx((0.8 * 0.2 / 20_000) ** 0.5)
    assert abs(rep["deviation_in_standard_errors"]) < 4
    assert rep["points"] == 20_000 and rep["seed"] == 3
    surface = orb.extract_surface(cloud.state, 0.8, resolution=32)
    fig, render = cloud_figure(cloud, 300, 240, surface=surface)
    assert render.rgba.shape[2] == 4 and fig.texts[0].get_text().startswith("2p")


def test_ply_point_cloud_reads_back():
    cloud = draw_cloud(orb.parse_state("1s + i*2px"), 500, seed=4)
    data = encode_ply_points(cloud.points_a0, cloud.psi, point_colours(cloud.psi), "1s + i*2px")
    # an outside reader (trimesh) sees a point cloud at the same positions
    pc = trimesh.load(io.BytesIO(data), file_type="ply")
    assert np.allclose(pc.vertices, cloud.points_a0.astype(np.float32))
    head, body = data.split(b"end_header\n")
    assert b"property float phase" in head and b"property float density" in head
    rec = np.frombuffer(body, dtype=[("p", "<f4", 3), ("c", "u1", 3), ("phase", "<f4"),
                                     ("density", "<f4")])
    assert np.allclose(rec["phase"], np.angle(cloud.psi), atol=1e-6)
    assert np.allclose(rec["density"], np.abs(cloud.psi) ** 2, rtol=1e-6)
