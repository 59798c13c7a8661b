"""samplewright: power, sample size and detectable effect for comparisons of group means.

``create_app`` is imported lazily so that ``import samplewright.core`` never imports Flask.
"""

from ._version import __version__

__all__ = ["__version__", "create_app"]


def __getattr__(name):
    if name == "create_app":
        from .app import create_app

        return create_app
    raise AttributeError(name)
