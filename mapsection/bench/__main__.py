"""Dispatch ``python -m mapsection.bench NAME [options]`` to ``mapsection.bench.NAME.main``."""

from __future__ import annotations

import sys

from . import available, load


def main(argv: list[str] | None = None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    names = available()
    if not argv or argv[0] in ("-h", "--help"):
        print("usage: python -m mapsection.bench NAME [options]  (NAME --help for its options)")
        print("benchmarks: " + ", ".join(names))
        return 0 if argv else 2
    try:
        module = load(argv[0])
    except KeyError:
        print(f"mapsection.bench: error: no benchmark {argv[0]!r}; have: {', '.join(names)}",
              file=sys.stderr)
        return 2
    return int(module.main(argv[1:]) or 0)


if __name__ == "__main__":
    sys.exit(main())
