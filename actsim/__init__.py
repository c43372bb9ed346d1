"""actsim: simulator for light-driven bending actuators.

Beer–Lambert absorption through a layer stack, first-order photoreaction
kinetics, heat conduction and layered-beam mechanics, from a scenario file to
bend angle, tip travel and blocked force over exposure time.
"""

from importlib.metadata import PackageNotFoundError, version as _version

try:
    __version__ = _version("actsim")
except PackageNotFoundError:  # running from a source tree without install
    __version__ = "0.0.0+unknown"

from .errors import ActsimError, ActsimInputError, ActsimSimulationError, ActsimWarning  # noqa: E402

__all__ = [
    "__version__",
    "ActsimError",
    "ActsimInputError",
    "ActsimSimulationError",
    "ActsimWarning",
    "load_scenario",
    "simulate",
    "solve",
]


def __getattr__(name):
    # Lazy imports keep `import actsim` fast and avoid import cycles.
    if name == "load_scenario":
        from .scenario import load_scenario

        return load_scenario
    if name == "simulate":
        from .solver import simulate

        return simulate
    if name == "solve":
        from .solver import solve

        return solve
    raise AttributeError(f"module 'actsim' has no attribute {name!r}")
