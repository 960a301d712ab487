"""Vector helpers: directions from angles, unit vectors, dot products over the last axis.

Axes are right-handed: x and y span the plane in which in-plane angles are measured (from +x
toward +y), z is out of that plane (elevation angles are measured from the x-y plane toward +z).
By default gravity points along -z (see :data:`STANDARD_GRAVITY`).
"""

from __future__ import annotations

import numpy as np

#: Standard acceleration of gravity g_n [m/s^2] (exact by definition; NIST SP 330, 3rd CGPM 1901).
STANDARD_GRAVITY = 9.80665


def direction(angle, elevation=0.0):
    """Unit vector from an in-plane angle and an elevation angle.

    .. math:: \\hat e = (\\cos a \\cos e,\\; \\sin a \\cos e,\\; \\sin e)

    Parameters
    ----------
    angle : array_like
        In-plane angle a [rad], from +x toward +y.
    elevation : array_like
        Elevation angle e [rad], from the x-y plane toward +z.

    Returns
    -------
    ndarray, shape (..., 3)
        Unit vectors [-].

    Examples
    --------
    >>> import numpy as np
    >>> np.round(direction(np.pi / 2), 12) + 0.0
    array([0., 1., 0.])

    Reference: elementary vector geometry (spherical to Cartesian components).
    """
    a = np.asarray(angle, dtype=float)
    e = np.asarray(elevation, dtype=float)
    a, e = np.broadcast_arrays(a, e)
    ce = np.cos(e)
    return np.stack([np.cos(a) * ce, np.sin(a) * ce, np.sin(e)], axis=-1)


def polar_velocity(speed, angle, elevation=0.0):
    """Velocity components from a speed and its direction angles.

    .. math:: \\vec V = s\\,(\\cos a \\cos e,\\; \\sin a \\cos e,\\; \\sin e)

    Parameters
    ----------
    speed : array_like
        Speed s [m/s]; a negative speed points opposite to the angles.
    angle, elevation : array_like
        Direction angles [rad], see :func:`direction`.

    Returns
    -------
    ndarray, shape (..., 3)
        Velocity [m/s].

    Examples
    --------
    >>> import numpy as np
    >>> polar_velocity(10.0, np.pi / 3).round(6).tolist()
    [5.0, 8.660254, 0.0]

    Reference: spherical-to-Cartesian components, common practice, no source.
    """
    return np.asarray(speed, dtype=float)[..., None] * direction(angle, elevation)


def dot(a, b):
    """Dot product over the last axis, broadcasting the others.

    >>> dot([1.0, 2.0, 3.0], [4.0, 5.0, 6.0])
    32.0
    """
    r = np.einsum("...i,...i->...", np.asarray(a, dtype=float), np.asarray(b, dtype=float))
    return float(r) if np.ndim(r) == 0 else r


def norm(a):
    """Euclidean length over the last axis [same unit as ``a``].

    >>> norm([3.0, 4.0, 0.0])
    5.0
    """
    r = np.sqrt(np.einsum("...i,...i->...", np.asarray(a, float), np.asarray(a, float)))
    return float(r) if np.ndim(r) == 0 else r


def resultant(v):
    """Magnitude and direction of vectors: the in-plane angle from +x toward +y and the
    elevation from the x-y plane toward +z.

    .. math:: |v| = \\sqrt{v_x^2 + v_y^2 + v_z^2}, \\quad a = \\operatorname{atan2}(v_y, v_x),
              \\quad e = \\operatorname{atan2}(v_z, \\sqrt{v_x^2 + v_y^2})

    Parameters
    ----------
    v : array_like (..., 3)
        Vectors [any unit: N, N m, ...].

    Returns
    -------
    (magnitude, angle, elevation) : arrays of shape (...)
        Magnitude [unit of v]; angles [rad], angle in (-pi, pi], elevation in [-pi/2, pi/2];
        NaN angles for a zero vector (no direction).

    Examples
    --------
    >>> m, a, e = resultant([3.0, 3.0, np.sqrt(18.0)])
    >>> round(float(m), 12), round(float(np.degrees(a)), 12), round(float(np.degrees(e)), 12)
    (6.0, 45.0, 45.0)

    Reference: elementary vector geometry (Cartesian to spherical components).
    """
    v = np.asarray(v, dtype=float)
    x, y, z = v[..., 0], v[..., 1], v[..., 2]
    h = np.hypot(x, y)
    mag = np.sqrt(h * h + z * z)
    none = ~(mag > 0)
    a = np.where(none, np.nan, np.arctan2(y, x) + 0.0)
    e = np.where(none, np.nan, np.arctan2(z, h) + 0.0)
    return mag, a, e
