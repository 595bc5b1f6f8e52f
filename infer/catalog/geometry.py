"""Clump positions: sky offsets -> disk-plane positions -> spacings.

Conventions (as on the sky): ``x`` increases to the east, ``y`` to the north;
the position angle PA of the disk's major axis is measured from north through
east; the inclination i is 0 for a face-on disk.

* RA/Dec become east/north angular offsets from a centre in the centre's
  offset frame (:meth:`astropy.coordinates.SkyCoord.spherical_offsets_to`);
* angular offsets become projected lengths with the small-angle relation
  offset [au] = offset [arcsec] * distance [pc];
* deprojection rotates the major axis onto one axis, stretches the minor-axis
  coordinate by 1 / cos i, and rotates back, so the deprojected positions keep
  the sky orientation (the disk as it would look face-on);
* spacings are the edges of the minimum spanning tree of the deprojected
  positions (N - 1 lengths) or each clump's nearest-neighbour distance (N
  lengths), with uncertainties propagated linearly from position errors.
"""

from __future__ import annotations

from dataclasses import dataclass

import astropy.units as u
import numpy as np
from astropy.coordinates import SkyCoord, UnitSphericalRepresentation
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import minimum_spanning_tree
from scipy.spatial import Delaunay, QhullError, cKDTree
from scipy.spatial.distance import pdist, squareform

__all__ = [
    "SPACING_METHODS",
    "mean_position",
    "sky_offsets",
    "angular_to_length",
    "deprojection_matrix",
    "deproject",
    "project_to_sky",
    "Spacings",
    "clump_spacings",
]

#: accepted values of the ``spacing`` option
SPACING_METHODS = ("mst", "nearest")
#: up to this many clumps the tree is found on the full distance matrix (N^2 memory);
#: above, on the edges of the Delaunay triangulation, which contain the Euclidean
#: minimum spanning tree (O(N) memory: 10 000 clumps would need 800 MB per dense matrix)
_DENSE_MAX = 1500


def _mst(scaled: np.ndarray):
    """The minimum spanning tree (a sparse COO matrix) of the points ``scaled`` (N, 2)."""
    n = len(scaled)
    if n > _DENSE_MAX:
        try:
            simplices = Delaunay(scaled).simplices
            edges = np.concatenate([simplices[:, [0, 1]], simplices[:, [1, 2]],
                                    simplices[:, [0, 2]]])
        except QhullError:   # all on a line: the tree joins neighbours along it
            axis = np.linalg.svd(scaled - scaled.mean(axis=0), full_matrices=False)[2][0]
            order = np.argsort(scaled @ axis)
            edges = np.column_stack([order[:-1], order[1:]])
        edges = np.unique(np.sort(edges, axis=1), axis=0)
        delta = scaled[edges[:, 0]] - scaled[edges[:, 1]]
        graph = coo_matrix((np.hypot(delta[:, 0], delta[:, 1]), (edges[:, 0], edges[:, 1])),
                           shape=(n, n))
        tree = minimum_spanning_tree(graph.tocsr()).tocoo()
        if tree.nnz == n - 1:
            return tree
    return minimum_spanning_tree(squareform(pdist(scaled))).tocoo()


def mean_position(coords: SkyCoord) -> SkyCoord:
    """Mean direction of a set of sky positions (mean of the unit vectors).

    Parameters
    ----------
    coords : SkyCoord
        At least one position.

    Returns
    -------
    SkyCoord
        A scalar position in the frame of ``coords``.
    """
    cart = coords.represent_as(UnitSphericalRepresentation).to_cartesian()
    sph = cart.mean().represent_as(UnitSphericalRepresentation)
    return SkyCoord(sph.lon, sph.lat, frame=coords.frame.name)


def sky_offsets(ra: u.Quantity, dec: u.Quantity, *,
                center: SkyCoord | None = None) -> tuple[u.Quantity, u.Quantity]:
    """East and north angular offsets of RA/Dec positions from a centre.

    Parameters
    ----------
    ra, dec : Quantity [deg], shape (N,)
        ICRS right ascension and declination.
    center : SkyCoord, optional
        Reference position; the mean position of the points when omitted.

    Returns
    -------
    east, north : Quantity [arcsec], shape (N,)
        Offsets along the longitude and latitude of the centre's offset frame
        (east and north at the centre).
    """
    coords = SkyCoord(ra=ra, dec=dec, frame="icrs")
    if center is None:
        center = mean_position(coords)
    east, north = center.spherical_offsets_to(coords)
    return east.to(u.arcsec), north.to(u.arcsec)


def angular_to_length(angle: u.Quantity, distance: u.Quantity) -> u.Quantity:
    """Projected length of a small angle at a distance: l = theta [rad] * d.

    Parameters
    ----------
    angle : Quantity [arcsec]
    distance : Quantity [pc]

    Returns
    -------
    Quantity [au]
        Equal to angle [arcsec] * distance [pc] by the definition of the parsec.
    """
    return (u.Quantity(angle).to_value(u.rad) * u.Quantity(distance)).to(u.au)


def deprojection_matrix(inclination: u.Quantity, position_angle: u.Quantity) -> np.ndarray:
    """2 x 2 matrix taking sky offsets (east, north) to deprojected offsets.

    The rows of ``R`` are the unit vectors of the major axis (sin PA, cos PA)
    and of the minor axis (cos PA, -sin PA); ``R`` is its own inverse, and the
    matrix is ``R @ diag(1, 1 / |cos i|) @ R``.

    Parameters
    ----------
    inclination : Quantity [deg]
        0 for face-on; |cos i| must not vanish.
    position_angle : Quantity [deg]
        Of the major axis, east of north.

    Returns
    -------
    ndarray, shape (2, 2)
    """
    pa = u.Quantity(position_angle).to_value(u.rad)
    cos_i = abs(np.cos(u.Quantity(inclination).to_value(u.rad)))
    rot = np.array([[np.sin(pa), np.cos(pa)], [np.cos(pa), -np.sin(pa)]])
    return rot @ np.diag([1.0, 1.0 / cos_i]) @ rot


def _apply(matrix: np.ndarray, x: u.Quantity, y: u.Quantity) -> tuple[u.Quantity, u.Quantity]:
    unit = u.Quantity(x).unit
    xv = u.Quantity(x).to_value(unit)
    yv = u.Quantity(y).to_value(unit)
    return ((matrix[0, 0] * xv + matrix[0, 1] * yv) * unit,
            (matrix[1, 0] * xv + matrix[1, 1] * yv) * unit)


def deproject(x: u.Quantity, y: u.Quantity, *, inclination: u.Quantity,
              position_angle: u.Quantity) -> tuple[u.Quantity, u.Quantity]:
    """Deproject sky offsets (x east, y north) into the disk plane.

    Parameters
    ----------
    x, y : Quantity [length or angle], shape (N,)
    inclination, position_angle : Quantity [deg]
        See :func:`deprojection_matrix`.

    Returns
    -------
    x, y : Quantity, same unit as the input
        Disk-plane positions, in the sky orientation.
    """
    return _apply(deprojection_matrix(inclination, position_angle), x, y)


def project_to_sky(x: u.Quantity, y: u.Quantity, *, inclination: u.Quantity,
                   position_angle: u.Quantity) -> tuple[u.Quantity, u.Quantity]:
    """Inverse of :func:`deproject`: disk-plane positions -> sky offsets."""
    return _apply(np.linalg.inv(deprojection_matrix(inclination, position_angle)), x, y)


@dataclass(frozen=True, eq=False)
class Spacings:
    """Spacings between clumps.

    Attributes
    ----------
    lengths : Quantity [au], shape (E,)
    errors : Quantity [au], shape (E,)
        One-sigma uncertainties (zeros without position errors).
    pairs : ndarray of int, shape (E, 2)
        Indices of the two clumps of each spacing.
    method : str
        "mst" (E = N - 1) or "nearest" (E = N, one per clump).
    """

    lengths: u.Quantity
    errors: u.Quantity
    pairs: np.ndarray
    method: str


def clump_spacings(
    x: u.Quantity,
    y: u.Quantity,
    *,
    method: str = "mst",
    x_err: u.Quantity | None = None,
    y_err: u.Quantity | None = None,
    matrix: np.ndarray | None = None,
) -> Spacings:
    """Minimum-spanning-tree edges or nearest-neighbour distances, with errors.

    Parameters
    ----------
    x, y : Quantity [length], shape (N,), N >= 2
        Deprojected positions; no two may coincide.
    method : {"mst", "nearest"}
    x_err, y_err : Quantity [length], shape (N,), optional
        One-sigma errors of the *sky* offsets (east, north), independent.
    matrix : ndarray (2, 2), optional
        The deprojection matrix that took the sky offsets to ``x, y``
        (identity when omitted), used to carry the errors into the disk plane.

    Returns
    -------
    Spacings
        Lengths in au. The error of an edge between clumps i and j is
        sqrt(sum_k (A^T e)_k^2 (s_ki^2 + s_kj^2)), with e the unit vector of
        the edge in the disk plane and s the sky errors (linear propagation).
    """
    if method not in SPACING_METHODS:
        raise ValueError(f"spacing method must be one of {SPACING_METHODS}, got {method!r}")
    pts = np.column_stack([u.Quantity(x).to_value(u.au), u.Quantity(y).to_value(u.au)])
    n = len(pts)
    if n < 2:
        raise ValueError("spacings need at least two clumps")
    # pairs from positions scaled to about unity: the squared distances of pdist and the
    # tree neither overflow nor underflow (a zero distance would be a missing tree edge)
    unit = float(np.max(np.abs(pts))) or 1.0
    scaled = pts / unit
    scaled = scaled - scaled.mean(axis=0)
    if method == "mst":
        tree = _mst(scaled)
        pairs = np.column_stack([tree.row, tree.col]).astype(int)
        order = np.lexsort((pairs[:, 1], pairs[:, 0]))
        pairs = pairs[order]
    else:
        _, idx = cKDTree(scaled).query(scaled, k=2)
        pairs = np.column_stack([np.arange(n), idx[:, 1]]).astype(int)
    delta = pts[pairs[:, 0]] - pts[pairs[:, 1]]
    lengths = np.hypot(delta[:, 0], delta[:, 1])
    errors = np.zeros_like(lengths)
    if x_err is not None or y_err is not None:
        zeros = np.zeros(n) * u.au
        sx = u.Quantity(zeros if x_err is None else x_err).to_value(u.au)
        sy = u.Quantity(zeros if y_err is None else y_err).to_value(u.au)
        a = np.eye(2) if matrix is None else np.asarray(matrix, dtype=float)
        grad = (delta / lengths[:, None]) @ a          # rows: (A^T e)^T
        # sqrt of the sum of the four squared terms, without overflowing squares
        errors = np.hypot(np.hypot(grad[:, 0] * sx[pairs[:, 0]], grad[:, 0] * sx[pairs[:, 1]]),
                          np.hypot(grad[:, 1] * sy[pairs[:, 0]], grad[:, 1] * sy[pairs[:, 1]]))
    return Spacings(lengths=lengths * u.au, errors=errors * u.au, pairs=pairs, method=method)
