"""Import colour-science without its plotting sub-package.

``colour/__init__.py`` always imports ``colour.plotting``, which pulls in matplotlib.pyplot
and costs about 0.8 s of start-up (measured: 1.4 s against 0.55 s, see
shared colour-science notes). lumeval draws its own charts and never needs
``colour.plotting``, so while colour is first imported a lazy stand-in takes its place;
the first attribute read on the stand-in imports the real sub-package, so a notebook user
who later does ``import colour.plotting`` or ``colour.plotting.plot_...`` still gets it.
"""

from __future__ import annotations

import importlib
import sys
import types


class _LazyPlotting(types.ModuleType):
    def __getattr__(self, name: str):
        if name.startswith("__") and name.endswith("__"):
            raise AttributeError(name)
        if sys.modules.get("colour.plotting") is self:
            del sys.modules["colour.plotting"]
        real = importlib.import_module("colour.plotting")
        parent = sys.modules.get("colour")
        if parent is not None:
            parent.plotting = real  # type: ignore[attr-defined]  # a submodule set on its package
        return getattr(real, name)


def load():
    """Return the ``colour`` package, imported without ``colour.plotting``."""
    if "colour" in sys.modules:
        return sys.modules["colour"]
    stub = _LazyPlotting("colour.plotting")
    sys.modules["colour.plotting"] = stub
    try:
        import colour
    except BaseException:
        if sys.modules.get("colour.plotting") is stub:
            del sys.modules["colour.plotting"]
        raise
    return colour
