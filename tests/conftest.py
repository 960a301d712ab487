import numpy as np
import pytest

from portflux.core import Ports


@pytest.fixture
def vane():
    """Factory: single vane turning a jet through theta [deg], relative outlet frictionless."""

    def make(V=30.0, A=0.002, rho=998.0, theta=120.0, U=10.0, absolute_outlet=False):
        th = np.radians(theta)
        w = V - U
        out = np.array([w * np.cos(th), w * np.sin(th), 0.0])
        if absolute_outlet:
            out = out + [U, 0.0, 0.0]
        # A role-based normal follows the velocity as typed; an outlet typed in the absolute
        # frame gets its geometric normal (along the relative outflow) explicitly.
        normal = [[-1.0, 0, 0], [np.cos(th), np.sin(th), 0.0]] if absolute_outlet else None
        return Ports.build(area=[A, A], density=rho, role=["in", "out"],
                           velocity=[[V, 0.0, 0.0], out], normal=normal,
                           relative=[False, not absolute_outlet])

    return make
