"""The segment-void surface-area factor against independent geometry.

Expected values come from outside the code under test: limiting cases worked by hand from
the hexagonal packing density π/(2√3) (Conway & Sloane, Sphere Packings, Lattices and Groups,
3rd ed., 1999, ch. 1), and a numerical surface integral done here with different code — a
triangulated sphere for the void walls and a Monte-Carlo estimate of the open fraction of
the flat top over the hexagonal unit cell.
"""

import math

import numpy as np
import pytest

from inventory.physics.errors import AnalysisInputError
from inventory.physics.segment_void import segment_void_surface_area_factor

# Area fraction of close-packed circles, π/(2√3) (Conway & Sloane 1999, ch. 1).
PACKING_FRACTION = math.pi / (2 * math.sqrt(3))


def _factor(diameter, height, **kw):
    return segment_void_surface_area_factor(sphere_diameter_nm=diameter, film_height_nm=height,
                                            **kw)


def test_limiting_cases_worked_by_hand():
    # h = 0: nothing deposited above the base plane, so the flat base is all the metal.
    assert _factor(600.0, 0.0).value == pytest.approx(1.0, abs=1e-12)
    # h = D/2: the openings are the spheres' equators, covering the packing fraction f of the
    # top; each void wall is a hemisphere, twice its equatorial disc, so 1 − f + 2f.
    assert _factor(600.0, 300.0).value == pytest.approx(1 - PACKING_FRACTION + 2 * PACKING_FRACTION,
                                                        rel=1e-12)
    # h = D: the openings close to points and each void is a whole sphere, four times its
    # equatorial disc: 1 + 4f.
    assert _factor(600.0, 600.0).value == pytest.approx(1 + 4 * PACKING_FRACTION, rel=1e-12)


def _triangulated_cap_area(radius, height, n=500):
    """Area of the sphere surface below height h (measured from the bottom), by summing the
    areas of a latitude–longitude triangle mesh whose centroids lie below h."""
    theta = np.linspace(0, np.pi, n + 1)
    phi = np.linspace(0, 2 * np.pi, n + 1)
    t, p = np.meshgrid(theta, phi, indexing="ij")
    pts = np.stack([radius * np.sin(t) * np.cos(p), radius * np.sin(t) * np.sin(p),
                    radius * (1 - np.cos(t))], axis=-1)  # z = 0 at the sphere's lowest point
    a, b, c, d = pts[:-1, :-1], pts[1:, :-1], pts[1:, 1:], pts[:-1, 1:]
    total = 0.0
    for u, v, w in ((a, b, c), (a, c, d)):
        area = 0.5 * np.linalg.norm(np.cross(v - u, w - u), axis=-1)
        centroid_z = (u[..., 2] + v[..., 2] + w[..., 2]) / 3
        total += area[centroid_z <= height].sum()
    return total


def _monte_carlo_open_fraction(diameter, height, samples=400_000, seed=7):
    """Share of the plane at height h inside a void opening, sampled over a rectangular cell
    of the hexagonal lattice (D × √3·D, two spheres)."""
    rng = np.random.default_rng(seed)
    width, depth = diameter, math.sqrt(3) * diameter
    x, y = rng.uniform(0, width, samples), rng.uniform(0, depth, samples)
    centres = [(0, 0), (width, 0), (0, depth), (width, depth), (width / 2, depth / 2)]
    radius = diameter / 2
    opening_sq = radius**2 - (height - radius) ** 2  # circle where the plane cuts the sphere
    nearest = np.min([(x - cx) ** 2 + (y - cy) ** 2 for cx, cy in centres], axis=0)
    return float(np.mean(nearest < opening_sq)), width * depth


@pytest.mark.parametrize("ratio", [0.15, 0.35, 0.5, 0.7, 0.9])
def test_numerical_surface_integral(ratio):
    diameter = 500.0
    height = ratio * diameter
    open_fraction, cell_area = _monte_carlo_open_fraction(diameter, height)
    walls = 2 * _triangulated_cap_area(diameter / 2, height)  # two spheres per cell
    expected = (1 - open_fraction) + walls / cell_area
    assert _factor(diameter, height).value == pytest.approx(expected, rel=5e-3)


def test_uncertainty_propagates_from_film_height_by_finite_difference():
    # Central difference of the factor itself checks the analytic derivative.
    diameter, height, u_h = 600.0, 240.0, 12.0
    step = 1e-3
    slope = (_factor(diameter, height + step).value - _factor(diameter, height - step).value) \
        / (2 * step)
    result = _factor(diameter, height, film_height_u_nm=u_h)
    assert result.standard_uncertainty == pytest.approx(abs(slope) * u_h, rel=1e-6)
    assert result.relative_uncertainty == pytest.approx(result.standard_uncertainty / result.value)
    with_d = _factor(diameter, height, film_height_u_nm=u_h, sphere_diameter_u_nm=6.0)
    assert with_d.standard_uncertainty > result.standard_uncertainty


@pytest.mark.parametrize("kw, field", [
    (dict(sphere_diameter_nm=0.0, film_height_nm=0.0), "sphere_diameter_nm"),
    (dict(sphere_diameter_nm=600.0, film_height_nm=-1.0), "film_height_nm"),
    (dict(sphere_diameter_nm=600.0, film_height_nm=601.0), "film_height_nm"),
    (dict(sphere_diameter_nm=float("nan"), film_height_nm=1.0), "sphere_diameter_nm"),
    (dict(sphere_diameter_nm=600.0, film_height_nm=10.0, film_height_u_nm=-1.0),
     "film_height_u_nm"),
])
def test_refuses_inputs_outside_the_model(kw, field):
    with pytest.raises(AnalysisInputError) as caught:
        segment_void_surface_area_factor(**kw)
    assert caught.value.field == field
