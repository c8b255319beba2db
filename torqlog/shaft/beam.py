"""Euler-Bernoulli beam finite elements: mesh, element matrices, assembly, simple supports,
static and eigenvalue solution.

Model
-----
A straight beam along x is cut into two-node elements with two degrees of freedom per
node, the deflection ``w`` and the slope ``theta``, ordered ``(w_0, theta_0, w_1,
theta_1, ...)``; Hermite cubic shape functions give the element stiffness and consistent
mass matrices. Simple supports fix the deflection (not the slope) at the node nearest
each support. Shear deformation and rotary inertia of the beam itself are neglected.

The shaft model that builds a beam from segments, bearings and masses lives in
:mod:`torqlog.shaft.lateral`.

References
----------
.. [1] J. S. Przemieniecki, *Theory of Matrix Structural Analysis*, McGraw-Hill, 1968:
   beam element stiffness and consistent mass matrices, consistent nodal loads.
.. [2] R. D. Blevins, *Formulas for Natural Frequency and Mode Shape*, Van Nostrand
   Reinhold, 1979, Table 8-1 (natural frequencies of beams, for checking).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.linalg

#: Default number of elements over the beam length when no element length is given.
DEFAULT_ELEMENTS = 60


@dataclass(frozen=True, eq=False)
class BeamMesh:
    """An assembled beam: nodes, global matrices and the free degrees of freedom.

    Attributes
    ----------
    nodes : array [m]
        Node positions, increasing.
    stiffness : array, shape (2 n, 2 n) [N/m, N, N*m]
        Global stiffness matrix over ``(w_0, theta_0, w_1, ...)``.
    mass : array, shape (2 n, 2 n) [kg, kg*m, kg*m^2]
        Global consistent mass matrix of the beam.
    element_length : array [m]
        Length of each element.
    element_mass : array [kg]
        Mass of each element.
    free : array of int
        Degrees of freedom left free by the supports.
    mass_definite : bool
        Every element has mass, so the mass matrix is positive definite.
    """

    nodes: np.ndarray
    stiffness: np.ndarray
    mass: np.ndarray
    element_length: np.ndarray
    element_mass: np.ndarray
    free: np.ndarray
    mass_definite: bool


def mesh_nodes(key_points: np.ndarray, length: float,
               max_element: float | None = None) -> np.ndarray:
    """Node positions with a node at every key point and no element longer than asked.

    Key points are clipped to ``[0, length]`` and merged when closer than
    ``1e-9 * length``; each interval between them is cut into equal elements.

    Parameters
    ----------
    key_points : array [m]
        Positions that must be nodes (ends, steps, supports, masses); 0 and ``length``
        among them.
    length : float [m]
        Beam length.
    max_element : float [m], optional
        Longest element; default ``length / DEFAULT_ELEMENTS``.

    Returns
    -------
    array [m]
        Node positions, increasing.
    """
    h = max_element if max_element else length / DEFAULT_ELEMENTS
    keys = np.sort(np.asarray(key_points, dtype=float))
    keys = np.clip(keys, 0.0, length)
    keys = keys[np.concatenate([[True], np.diff(keys) > 1e-9 * length])]
    counts = np.maximum(1, np.ceil(np.diff(keys) / h - 1e-9)).astype(int)
    return np.concatenate([np.linspace(a, b, n, endpoint=False)
                           for a, b, n in zip(keys[:-1], keys[1:], counts, strict=True)]
                          + [keys[-1:]])


def nearest_nodes(nodes: np.ndarray, points: np.ndarray) -> np.ndarray:
    """Index of the node nearest each point.

    Parameters
    ----------
    nodes : array [m]
    points : array [m]

    Returns
    -------
    array of int
    """
    return np.abs(np.asarray(points, float)[:, None] - nodes[None, :]).argmin(axis=1)


def element_matrices(element_length: np.ndarray, bending_stiffness: np.ndarray,
                     mass_per_length: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Stiffness and consistent mass matrices of Euler-Bernoulli beam elements.

    k = EI / L^3 [[12, 6L, -12, 6L], [6L, 4L^2, -6L, 2L^2], ...] and
    m = rho A L / 420 [[156, 22L, 54, -13L], [22L, 4L^2, 13L, -3L^2], ...] over
    ``(w_1, theta_1, w_2, theta_2)``.

    Parameters
    ----------
    element_length : array [m]
    bending_stiffness : array [N*m^2]
        EI of each element.
    mass_per_length : array [kg/m]
        rho A of each element.

    Returns
    -------
    (stiffness, mass) : arrays, shape (n_elements, 4, 4)

    References
    ----------
    .. [1] Przemieniecki (1968), beam element stiffness and consistent mass matrices.
    """
    le = element_length
    L = le[:, None, None]
    k_unit = np.array([[12, 6, -12, 6], [6, 4, -6, 2], [-12, -6, 12, -6], [6, 2, -6, 4]], float)
    m_unit = np.array([[156, 22, 54, -13], [22, 4, 13, -3], [54, 13, 156, -22],
                       [-13, -3, -22, 4]], float)
    # powers of L for entries (w,w)=0, (w,theta)=1, (theta,theta)=2
    p = np.array([0, 1, 0, 1])
    powers = p[:, None] + p[None, :]
    ke = (bending_stiffness / le**3)[:, None, None] * k_unit * L**powers
    me = (mass_per_length * le / 420.0)[:, None, None] * m_unit * L**powers
    return ke, me


def assemble(elements: np.ndarray) -> np.ndarray:
    """Global matrix of consecutive two-node elements (element ``j`` joins nodes j, j+1).

    Parameters
    ----------
    elements : array, shape (n_elements, 4, 4)

    Returns
    -------
    array, shape (2 (n_elements + 1), 2 (n_elements + 1))

    References
    ----------
    .. [1] Przemieniecki (1968), assembly of the structure matrices.
    """
    ndof = 2 * (len(elements) + 1)
    dofs = 2 * np.arange(len(elements))[:, None] + np.arange(4)[None, :]
    rows, cols = dofs[:, :, None], dofs[:, None, :]
    out = np.zeros((ndof, ndof))
    np.add.at(out, (np.broadcast_to(rows, elements.shape),
                    np.broadcast_to(cols, elements.shape)), elements)
    return out


def free_dofs(nodes: np.ndarray, supports: np.ndarray) -> np.ndarray:
    """Degrees of freedom left free by simple supports (deflection fixed, slope free).

    Parameters
    ----------
    nodes : array [m]
    supports : array [m]
        Support positions; each fixes the deflection of the nearest node.

    Returns
    -------
    array of int
    """
    fixed = 2 * nearest_nodes(nodes, np.array(supports))
    return np.setdiff1d(np.arange(2 * len(nodes)), fixed)


def assemble_beam(nodes: np.ndarray, bending_stiffness: np.ndarray,
                  mass_per_length: np.ndarray, supports: np.ndarray) -> BeamMesh:
    """Element matrices, assembly and supports of a beam in one call.

    Parameters
    ----------
    nodes : array [m]
        From :func:`mesh_nodes`.
    bending_stiffness : array [N*m^2]
        EI of each element (``len(nodes) - 1`` values).
    mass_per_length : array [kg/m]
        rho A of each element.
    supports : array [m]
        Simple-support positions.

    Returns
    -------
    BeamMesh

    References
    ----------
    .. [1] Przemieniecki (1968).
    """
    le = np.diff(nodes)
    ke, me = element_matrices(le, bending_stiffness, mass_per_length)
    return BeamMesh(nodes, assemble(ke), assemble(me), le, mass_per_length * le,
                    free_dofs(nodes, supports), bool(np.all(mass_per_length > 0)))


def load_vector(n_nodes: int, point_nodes: np.ndarray, point_forces: np.ndarray,
                element_length: np.ndarray | None = None,
                line_load: np.ndarray | None = None) -> np.ndarray:
    """Nodal load vector of point forces at nodes and a uniform line load per element.

    A uniform load ``q`` on an element of length ``L`` gives the consistent nodal loads
    ``(q L / 2, q L^2 / 12, q L / 2, -q L^2 / 12)``.

    Parameters
    ----------
    n_nodes : int
    point_nodes : array of int
        Node of each point force.
    point_forces : array [N]
        Transverse forces, positive in the direction of positive deflection.
    element_length : array [m], optional
        Needed with ``line_load``.
    line_load : array [N/m], optional
        Uniform load on each element.

    Returns
    -------
    array [N, N*m]
        Over ``(w_0, theta_0, w_1, ...)``.

    References
    ----------
    .. [1] Przemieniecki (1968), consistent nodal loads of a distributed load.
    """
    F = np.zeros(2 * n_nodes)
    if len(point_nodes):
        np.add.at(F, 2 * np.asarray(point_nodes), point_forces)
    if line_load is not None:
        le, w = element_length, line_load
        i = 2 * np.arange(len(le))
        np.add.at(F, i, w * le / 2)
        np.add.at(F, i + 1, w * le**2 / 12)
        np.add.at(F, i + 2, w * le / 2)
        np.add.at(F, i + 3, -w * le**2 / 12)
    return F


def solve_static(stiffness: np.ndarray, load: np.ndarray, free: np.ndarray) -> np.ndarray:
    """Displacements under a load with the supported degrees of freedom held at zero.

    Parameters
    ----------
    stiffness : array, shape (n_dof, n_dof)
    load : array, shape (n_dof,)
    free : array of int

    Returns
    -------
    array, shape (n_dof,) [m, rad]
    """
    u = np.zeros(stiffness.shape[0])
    f = free
    u[f] = scipy.linalg.solve(stiffness[np.ix_(f, f)], load[f], assume_a="pos")
    return u


def solve_modes(stiffness: np.ndarray, mass: np.ndarray, free: np.ndarray, n: int,
                mass_definite: bool = True) -> tuple[np.ndarray, np.ndarray]:
    """Lowest natural frequencies and mode shapes, K phi = omega^2 M phi.

    Solved with ``scipy.linalg.eigh(K, M)`` over the free degrees of freedom. When the
    mass matrix is singular (``mass_definite`` False: massless elements) the flexibility
    form M phi = (1/omega^2) K phi is solved instead; it has as many finite modes as
    the mass matrix has rank.

    Parameters
    ----------
    stiffness, mass : arrays, shape (n_dof, n_dof)
    free : array of int
    n : int
        Number of modes wanted (fewer are returned when fewer exist).
    mass_definite : bool
        The mass matrix is positive definite.

    Returns
    -------
    freqs : array [Hz]
        Ascending.
    shapes : array, shape (n_modes, n_nodes)
        Deflection at the nodes, scaled to a peak of +1.

    References
    ----------
    .. [1] Przemieniecki (1968); Blevins (1979), Table 8-1.
    """
    f = free
    Kf, Mf = stiffness[np.ix_(f, f)], mass[np.ix_(f, f)]
    if mass_definite:
        k = min(n, len(f))
        w2, vecs = scipy.linalg.eigh(Kf, Mf, subset_by_index=[0, k - 1])
    else:
        lam, vecs = scipy.linalg.eigh(Mf, Kf)
        keep = np.flatnonzero(lam > 1e-12 * max(lam.max(), 0.0))[::-1][:n]
        w2, vecs = 1.0 / lam[keep], vecs[:, keep]
    u = np.zeros((stiffness.shape[0], vecs.shape[1]))
    u[f] = vecs
    shapes = u[0::2].T
    peak = shapes[np.arange(len(shapes)), np.abs(shapes).argmax(axis=1)]
    shapes = shapes / np.where(peak == 0, 1.0, peak)[:, None]
    return np.sqrt(np.maximum(w2, 0.0)) / (2 * math.pi), shapes


def midpoint_deflection(displacement: np.ndarray, element_length: np.ndarray) -> np.ndarray:
    """Deflection at each element's midpoint from the Hermite cubic interpolation.

    w(L/2) = (w_1 + w_2) / 2 + L (theta_1 - theta_2) / 8.

    Parameters
    ----------
    displacement : array [m, rad]
        Over ``(w_0, theta_0, w_1, ...)``.
    element_length : array [m]

    Returns
    -------
    array [m]

    References
    ----------
    .. [1] Przemieniecki (1968), Hermite shape functions of the beam element.
    """
    w, t = displacement[0::2], displacement[1::2]
    return (w[:-1] + w[1:]) / 2 + element_length * (t[:-1] - t[1:]) / 8
