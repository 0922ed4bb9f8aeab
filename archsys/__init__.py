"""archsys: the architecture of multi-planet systems from catalogue-level measurements.

Python API (see the README's "Python API" section)::

    import archsys
    system = archsys.read_system(archsys.demo_path("velmora"))
    result = archsys.analyze(system, archsys.AnalysisOptions(n_draws=2000, seed=1))
    archsys.planet_table(result)              # pandas DataFrame (kind="astropy": Table with units)
    archsys.pair_table(result)
    archsys.posterior_draws(result)           # every draw, astronomers' units
    archsys.corner_plot(result, planet="b")   # matplotlib Figure
    archsys.render(result, "markdown")        # any report format

Internal units everywhere inside the physics kernels: day, M_sun, au, rad, m/s.
Public functions in :mod:`archsys.physics.kepler` take astropy Quantities.
"""
from .errors import InputError  # noqa: E402
from .demos import demo_path  # noqa: E402
from .model.reader import read_system  # noqa: E402
from .version import __version__  # noqa: E402

__all__ = ["InputError", "read_system", "analyze", "AnalysisOptions", "planet_table", "pair_table",
           "posterior_draws", "corner_plot", "render", "write_outputs", "demo_path", "__version__"]


def analyze(system, options=None):
    """Analyse a system (see :func:`archsys.pipeline.analyze`); returns an Analysis."""
    from .pipeline import analyze as _analyze
    return _analyze(system, options)


def __getattr__(name):          # the heavier parts load on first use
    if name == "AnalysisOptions":
        from .pipeline import AnalysisOptions
        return AnalysisOptions
    if name in ("planet_table", "pair_table", "posterior_draws"):
        from .output import dataframes
        return getattr(dataframes, name)
    if name in ("render", "write_outputs"):
        from .output import formats
        return getattr(formats, name)
    raise AttributeError(f"module 'archsys' has no attribute {name!r}")


def corner_plot(result, planet=None, preset=None):
    """Corner plot (matplotlib Figure) of one planet (short or full name) or, by default, the system.

    Planet: e, ω, sky inclination, tilt and mass; system: σ, mutual inclinations and masses.
    """
    from .output import figures
    doc, draws = result.document, result.posterior.draws
    if planet is None:
        params = figures.system_parameters(draws, doc)
        title = doc.get("system")
    else:
        from .output.numbers import short_name
        names = [p["name"] for p in doc["planets"]]
        short = [short_name(n, doc.get("system", "")) for n in names]
        if planet in names:
            j = names.index(planet)
        elif planet in short:
            j = short.index(planet)
        else:
            raise ValueError(f"no planet {planet!r}; planets are {', '.join(names)}")
        params = figures.planet_parameters(draws, doc, j)
        title = names[j]
    return figures.corner_figure(params, preset=preset, title=title)
