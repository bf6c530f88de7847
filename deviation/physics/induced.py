r"""The induced (soft-iron) magnetism of a steel item: its polarisability, bounded, and its field
at a sensor as a 3x3 matrix of the Earth's field.

A soft-iron item in the Earth's field F takes the moment m = alpha F / mu0, alpha its
polarisability tensor [m^3]. For a body with three mirror planes alpha is diagonal in the body's
axes: alpha_i = V chi / (1 + N_i chi) along each, N_i its demagnetising factor. Its field at a
sensor is then b = M F with a dimensionless 3x3 matrix M (the item's share of Poisson's nine
rods), in the vessel frame (x forward, y port, z up).

What is exact and what is a bound
---------------------------------
- Sphere and ellipsoid: uniform magnetisation is exact for every chi (Poisson, Maxwell); alpha
  from the exact factors; the field outside is exact.
- Box, plate, cylinder, rod (not ellipsoids): the magnetisation is not uniform and alpha is
  known only between two proven bounds, both from the variational principle of magnetostatics,
  in which the moment along a unit vector e maximises over trial magnetisations P inside the body

  .. math:: \alpha_{ee}H_0^2 = \max_P \Bigl[2H_0\!\int e\cdot P - \!\int\!\frac{|P|^2}{\chi}
            - \!\int P\cdot\mathcal N P\Bigr]

  (:math:`\mathcal N P` minus the demagnetising field of P, a positive operator):

  * lower: a uniform trial P gives :math:`V\chi/(1+N^{(0)}\chi)` with :math:`N^{(0)}` the
    magnetometric factor of the uniformly magnetised body (Aharoni; Chen, Brug & Goldfarb);
    a larger body admits every trial of a smaller one, so an inscribed ellipsoid's exact alpha
    is a lower bound too; the larger of the two is taken;
  * upper: by the same inclusion the exact alpha of any *enclosing* ellipsoid bounds it above;
    the enclosing ellipsoid is chosen per axis to make that bound least.

  Both grow with chi, so the band over a permeability band [mu_low, mu_high] runs from the
  lower bound at mu_low to the upper bound at mu_high.
- Hollow box and hollow cylinder: the upper end is the solid body's upper bound (the shell lies
  inside it: proven). The lower end is a stated model, not a bound: the solid's lower bound times
  Maxwell's thin-shell ratio for a sphere of the body's largest half-dimension with the same wall.
- Field near a box or cylinder: a uniformly magnetised body of the same moment (surface-charge
  closed form; azimuth quadrature with a proven error). This is the standard model, not a bound:
  a high-permeability rod's magnetic charge spreads along it rather than sitting at its ends.

References
----------
W. F. Brown, Jr., *Magnetostatic Principles in Ferromagnetism*, North-Holland, 1962 (the
variational principles; from memory, chapter not checked). G. Pólya and G. Szegő,
*Isoperimetric Inequalities in Mathematical Physics*, Princeton, 1951 (polarisation grows with
the body). H. Ammari and H. Kang, *Polarization and Moment Tensors*, Springer, 2007, ch. 4
(monotonicity of the polarisation tensor in the domain and the contrast; from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import demag, magnetised

#: Shapes of a steel item the physics knows.
SHAPES = ("sphere", "ellipsoid", "box", "plate", "cylinder", "rod", "hollow box",
          "hollow cylinder")

#: Steps of the search over enclosing ellipsoids (per simplex axis for boxes, along the one
#: parameter for cylinders). Any enclosing ellipsoid gives a valid bound; a finer search only
#: tightens it.
_ENCLOSING_STEPS = 120


def susceptibility(relative_permeability):
    """chi = mu_r - 1, refusing mu_r < 1 (steel is never diamagnetic); ``inf`` allowed."""
    mu = np.asarray(relative_permeability, dtype=float)
    if np.any(~(mu >= 1.0)):
        raise ValueError(f"relative permeability must be at least 1, got {mu.tolist()}")
    return mu - 1.0


def _alpha(volume, factors, mu):
    """V / (1/chi + N): the polarisability of a uniformly magnetised body [m^3]."""
    chi = susceptibility(mu)
    with np.errstate(divide="ignore"):
        inverse = np.where(chi == 0.0, np.inf, 1.0 / np.where(chi == 0.0, 1.0, chi))
    return volume / (inverse + factors)


def ellipsoid_polarisability_m3(semi_axes_m, relative_permeability):
    r"""Exact polarisability of a soft-iron ellipsoid along its principal axes [m^3].

    Parameters
    ----------
    semi_axes_m : (..., 3) array [m]
    relative_permeability : array_like
        mu_r >= 1, broadcast against ``semi_axes_m[..., 0]``; ``inf`` allowed.

    Returns
    -------
    (..., 3) array [m^3]
        :math:`\alpha_i = V\chi/(1 + N_i\chi)`; for steel (:math:`\chi\to\infty`) :math:`V/N_i`;
        a sphere gives :math:`3V(\mu-1)/(\mu+2)`.

    References
    ----------
    J. A. Osborn, Phys. Rev. 67, 351 (1945); J. D. Jackson, *Classical Electrodynamics*, 3rd
    ed., 1999, §5.11 (the permeable sphere).
    """
    axes = np.asarray(semi_axes_m, dtype=float)
    volume = 4.0 / 3.0 * np.pi * np.prod(axes, axis=-1)
    mu = np.asarray(relative_permeability, dtype=float)[..., None]
    return _alpha(volume[..., None], demag.ellipsoid_factors(axes), mu)


def _box_enclosing_upper(half, mu):
    """Least exact alpha_i over ellipsoids through the corners of a box, per axis."""
    n = _ENCLOSING_STEPS
    i, j = np.meshgrid(np.arange(1, n), np.arange(1, n), indexing="ij")
    keep = i + j < n
    u, v = i[keep] / n, j[keep] / n
    w = 1.0 - u - v
    semi = half / np.sqrt(np.stack([u, v, w], axis=-1))      # a^2/A^2 + b^2/B^2 + c^2/C^2 = 1
    return np.min(ellipsoid_polarisability_m3(semi, mu), axis=0)


def _cylinder_enclosing_upper(half_length, radius, mu):
    """Least exact alpha over spheroids through the rims of a cylinder (axis last)."""
    u = np.arange(1, _ENCLOSING_STEPS) / _ENCLOSING_STEPS
    semi = np.stack([radius / np.sqrt(1 - u), radius / np.sqrt(1 - u), half_length / np.sqrt(u)],
                    axis=-1)                                 # h^2/A^2 + R^2/S^2 = 1
    return np.min(ellipsoid_polarisability_m3(semi, mu), axis=0)


@dataclass(frozen=True)
class PolarisabilityBand:
    """Principal polarisabilities of an item in its own axes, low and high [m^3].

    ``low_is_bound`` is False where the low end is a stated model (hollow items), True where it
    is proven; the high end is always a proven upper bound (exact for ellipsoids).
    """

    low_m3: np.ndarray
    high_m3: np.ndarray
    exact_shape: bool
    low_is_bound: bool


def solid_dimensions(shape, sizes_m):
    """The outer body of an item in its own axes: ``("ellipsoid", semi-axes)``,
    ``("box", sides)`` or ``("cylinder", (length, diameter))``, axis of a cylinder along z.

    ``sizes_m``: sphere (diameter,); ellipsoid (three diameters); box, plate, hollow box (three
    sides, along the item's x, y, z); cylinder, rod, hollow cylinder (length, diameter).
    """
    sizes = np.atleast_1d(np.asarray(sizes_m, dtype=float))
    expected = {"sphere": 1, "ellipsoid": 3, "box": 3, "plate": 3, "hollow box": 3,
                "cylinder": 2, "rod": 2, "hollow cylinder": 2}
    if shape not in expected:
        raise ValueError(f"unknown shape {shape!r}; expected one of {', '.join(SHAPES)}")
    if sizes.shape != (expected[shape],) or not np.all(sizes > 0) or not np.all(np.isfinite(sizes)):
        raise ValueError(f"a {shape} needs {expected[shape]} positive size(s), got "
                         f"{sizes.tolist()}")
    if shape == "sphere":
        return "ellipsoid", np.full(3, sizes[0] / 2.0)
    if shape == "ellipsoid":
        return "ellipsoid", sizes / 2.0
    if shape in ("box", "plate", "hollow box"):
        return "box", sizes
    return "cylinder", sizes


def polarisability_band(shape, sizes_m, mu_low, mu_high, wall_m=None) -> PolarisabilityBand:
    r"""Bounds on an item's principal polarisabilities over a permeability band [m^3].

    Parameters
    ----------
    shape : str
        One of :data:`SHAPES`.
    sizes_m : array_like [m]
        See :func:`solid_dimensions`.
    mu_low, mu_high : float
        The relative permeability band, 1 <= mu_low <= mu_high (``inf`` allowed).
    wall_m : float [m], for hollow shapes only
        Wall thickness.

    Returns
    -------
    PolarisabilityBand
        In the item's own axes (a cylinder's axis is the third).

    Notes
    -----
    See the module notes: exact for ellipsoids; between the uniform-trial (or inscribed
    ellipsoid) lower bound and the enclosing-ellipsoid upper bound for boxes and cylinders; for
    hollow items the solid's upper bound over Maxwell's thin-shell ratio applied to the solid's
    lower bound, the ratio taken for a sphere of the largest half-dimension
    (:func:`deviation.physics.demag.hollow_sphere_polarisability_m3`).
    """
    mu_low, mu_high = float(mu_low), float(mu_high)
    susceptibility([mu_low, mu_high])
    if mu_high < mu_low:
        raise ValueError("the permeability band's high figure is below its low figure")
    hollow = shape.startswith("hollow")
    if hollow and (wall_m is None or not float(wall_m) > 0):
        raise ValueError(f"a {shape} needs a positive wall thickness")
    if not hollow and wall_m is not None:
        raise ValueError(f"a {shape} has no wall; give the wall only for hollow shapes")
    body, dims = solid_dimensions(shape, sizes_m)
    if body == "ellipsoid":
        low = ellipsoid_polarisability_m3(dims, mu_low)
        high = ellipsoid_polarisability_m3(dims, mu_high)
        return PolarisabilityBand(low, high, exact_shape=True, low_is_bound=True)
    if body == "box":
        volume = float(np.prod(dims))
        half = dims / 2.0
        trial = _alpha(volume, demag.prism_factors(dims), mu_low)
        inscribed = ellipsoid_polarisability_m3(half, mu_low)
        high = _box_enclosing_upper(half, mu_high)
        largest_half = float(np.max(half))
    else:
        length, diameter = dims
        radius = diameter / 2.0
        volume = np.pi * radius ** 2 * length
        axial, transverse = demag.cylinder_factors(length, diameter)
        trial = _alpha(volume, np.array([transverse, transverse, axial]), mu_low)
        inscribed = ellipsoid_polarisability_m3([radius, radius, length / 2.0], mu_low)
        high = _cylinder_enclosing_upper(length / 2.0, radius, mu_high)
        largest_half = max(radius, length / 2.0)
    low = np.maximum(trial, inscribed)
    if hollow:
        wall = float(wall_m)
        if wall >= float(np.min(dims)) / 2.0:
            raise ValueError(f"the wall of a {shape} must be thinner than half its smallest size")
        ratio = (demag.hollow_sphere_polarisability_m3(largest_half, wall, mu_low)
                 / demag.hollow_sphere_polarisability_m3(largest_half, largest_half, mu_low))
        return PolarisabilityBand(low * ratio, high, exact_shape=False, low_is_bound=False)
    return PolarisabilityBand(low, high, exact_shape=False, low_is_bound=True)


def rotation_from_axis(axis):
    """A rotation whose third column is the unit ``axis`` (vessel frame): an item's own frame
    for a cylinder or rod whose axis is given (the other two axes are immaterial by symmetry)."""
    n = np.asarray(axis, dtype=float)
    size = np.linalg.norm(n)
    if n.shape != (3,) or not size > 0:
        raise ValueError(f"an axis must be a non-zero vector, got {n.tolist()}")
    n = n / size
    helper = np.eye(3)[int(np.argmin(np.abs(n)))]
    first = np.cross(helper, n)
    first /= np.linalg.norm(first)
    return np.stack([first, np.cross(n, first), n], axis=-1)


def body_tensor(shape, sizes_m, points_body_m):
    """Exterior field tensor (H = T M) of the item's outer body, uniformly magnetised,
    at points in its own frame; exact for spheres and ellipsoids."""
    body, dims = solid_dimensions(shape, sizes_m)
    if body == "ellipsoid":
        return magnetised.ellipsoid_tensor(points_body_m, dims)
    if body == "box":
        return magnetised.cuboid_tensor(points_body_m, dims)
    return magnetised.cylinder_tensor(points_body_m, dims[0], dims[1])


def body_volume_m3(shape, sizes_m):
    """Volume of the item's outer body [m^3] (the moment is spread over it as M = m/V)."""
    body, dims = solid_dimensions(shape, sizes_m)
    if body == "ellipsoid":
        return 4.0 / 3.0 * np.pi * float(np.prod(dims))
    if body == "box":
        return float(np.prod(dims))
    return np.pi * (dims[1] / 2.0) ** 2 * dims[0]


def field_matrix(shape, sizes_m, centre_m, sensor_m, alpha_m3, rotation=None, *,
                 point_dipole=False):
    r"""The item's field at a sensor as a matrix of the Earth's field, :math:`b = M F`.

    Parameters
    ----------
    shape : str
    sizes_m : array_like [m]
    centre_m, sensor_m : (3,) arrays [m]
        The item's centre and the sensor, vessel frame (x forward, y port, z up).
    alpha_m3 : (..., 3) array [m^3]
        Principal polarisabilities in the item's own axes (e.g. a corner of the band).
    rotation : (3, 3) array, optional
        Columns: the item's own axes in the vessel frame (identity: sides along x, y, z).
    point_dipole : bool
        Use a point dipole at the centre instead of the extended body (for comparison; the
        extended body is the model at every distance).

    Returns
    -------
    (..., 3, 3) array, dimensionless
        :math:`M = R\,T(p)\,\mathrm{diag}(\alpha/V)\,R^T` with :math:`p = R^T(x_s - x_c)`, T the
        body's exterior tensor; with a point dipole :math:`T = V\,(3\hat p\hat p^T - I)/(4\pi p^3)`.

    Notes
    -----
    :math:`m = R\,\mathrm{diag}(\alpha)R^TF/\mu_0` and the field :math:`\mu_0 H`, so
    :math:`\mu_0` cancels: M is a pure number, the same for F in tesla or nanotesla.
    """
    rot = np.eye(3) if rotation is None else np.asarray(rotation, dtype=float)
    if rot.shape != (3, 3) or not np.allclose(rot.T @ rot, np.eye(3), atol=1e-9):
        raise ValueError("rotation must be a 3x3 orthogonal matrix")
    offset = np.asarray(sensor_m, dtype=float) - np.asarray(centre_m, dtype=float)
    p = rot.T @ offset
    volume = body_volume_m3(shape, sizes_m)
    if point_dipole:
        tensor = volume * magnetised.dipole_tensor(p)
    else:
        tensor = body_tensor(shape, sizes_m, p)
    alpha = np.asarray(alpha_m3, dtype=float)
    scaled = tensor[..., :, :] * (alpha[..., None, :] / volume)     # T diag(alpha/V)
    return rot @ scaled @ rot.T


def band_corners(band: PolarisabilityBand):
    """The eight corners of the band's box of principal polarisabilities, (8, 3) [m^3].

    For a fixed heading and attitude the field is linear in alpha, so every figure that is
    largest at an extreme point of the box (the deviation's angle, the total field) is largest at
    one of these corners; the box contains every alpha the bounds allow.
    """
    pick = np.array([[(k >> i) & 1 for i in range(3)] for k in range(8)], dtype=bool)
    return np.where(pick, band.high_m3, band.low_m3)


#: An item closer to a sensor than this many times its largest size is "near": its shape and
#: orientation shape the field (the issue's "about 3x its size"; common practice, no source).
NEAR_FACTOR = 3.0


def largest_size_m(shape, sizes_m):
    """The item's largest outer dimension [m]."""
    body, dims = solid_dimensions(shape, sizes_m)
    return float(np.max(dims) * (2.0 if body == "ellipsoid" else 1.0))


def unknown_orientation_matrix(centre_m, sensor_m, band: PolarisabilityBand, size_m):
    r"""A far item whose orientation is not known: a fixed matrix and the radius of the rest.

    Parameters
    ----------
    centre_m, sensor_m : (3,) arrays [m]
    band : PolarisabilityBand
    size_m : float [m]
        The item's largest size (:func:`largest_size_m`).

    Returns
    -------
    matrix : (3, 3) array
        :math:`c\,G` with :math:`G = (3\hat r\hat r^T - I)/(4\pi r^3)` and c the middle of the
        band's whole range of principal values.
    radius : float
        :math:`\|G\|_2 (\alpha_{max} - \alpha_{min})/2` (:math:`\|G\|_2 = 2/(4\pi r^3)`): for every
        orientation and every alpha in the band, :math:`|b - cGF| \le` radius :math:`\cdot |F|`.

    Notes
    -----
    Any orientation gives :math:`\alpha_v = R\,\mathrm{diag}(\alpha)R^T = cI + E` with E
    symmetric with eigenvalues :math:`\alpha_i - c`, so
    :math:`\|E\|_2 \le (\alpha_{max} - \alpha_{min})/2` when c is the midpoint, and
    :math:`|GEF| \le \|G\|_2\|E\|_2|F|`. The dipole kernel does not depend on the orientation;
    near an item (closer than about three times its size) its shape does, and this split is
    refused there: give the item's axis.
    """
    offset = np.asarray(sensor_m, dtype=float) - np.asarray(centre_m, dtype=float)
    if float(np.linalg.norm(offset)) < NEAR_FACTOR * float(size_m):
        raise ValueError("an item this near a sensor needs its orientation: its shape shapes "
                         "the field here")
    kernel = magnetised.dipole_tensor(offset)
    lowest = float(np.min(band.low_m3))
    highest = float(np.max(band.high_m3))
    centre = (lowest + highest) / 2.0
    radius = 2.0 / (4.0 * np.pi * float(np.linalg.norm(offset)) ** 3) * (highest - lowest) / 2.0
    return centre * kernel, radius
