"""archsys: the architecture of multi-planet systems from catalogue-level measurements.

Internal units everywhere inside the physics kernels: day, M_sun, au, rad, m/s.
Public functions in :mod:`archsys.physics.kepler` take astropy Quantities.
"""
__version__ = "0.1.0"

from .errors import InputError  # noqa: E402
from .model.reader import read_system  # noqa: E402

__all__ = ["InputError", "read_system", "analyze", "__version__"]


def analyze(system, options=None):
    """Analyse a system (see :func:`archsys.pipeline.analyze`)."""
    from .pipeline import analyze as _analyze
    return _analyze(system, options)
