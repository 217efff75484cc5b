"""Regenerate the Varrow Range sample area (invented data) from its known model.

    python sample_area/generate.py [--out FOLDER] [--seed N]

Default output: this script's own folder. Deterministic: the same seed gives
the same numbers. See README.md beside this script.
"""

from __future__ import annotations

import argparse
from pathlib import Path

from mapsection.sample import DEFAULT_SEED, generate


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", type=Path, default=Path(__file__).resolve().parent,
                        help="output folder (default: this script's folder)")
    parser.add_argument("--seed", type=int, default=DEFAULT_SEED, help="random seed")
    args = parser.parse_args()
    for name, path in generate(args.out, seed=args.seed).items():
        print(f"wrote {name}: {path}")


if __name__ == "__main__":
    main()
