"""Benchmarks: ``python -m mapsection.bench NAME [options]``.

Each benchmark is a module ``mapsection.bench.<name>`` with a ``main(argv)``
function. Benchmarks measure speed as ratios against baselines timed in the
same run; results are recorded in docs/performance.md.
"""

from __future__ import annotations

import importlib
import pkgutil


def available() -> list[str]:
    """Names of the benchmark modules in this package."""
    return sorted(
        m.name for m in pkgutil.iter_modules(__path__) if not m.name.startswith("_")
    )


def load(name: str):
    """The benchmark module ``name``; it must define ``main(argv)``."""
    if name not in available():
        raise KeyError(name)
    module = importlib.import_module(f"{__name__}.{name}")
    if not callable(getattr(module, "main", None)):
        raise KeyError(name)
    return module
