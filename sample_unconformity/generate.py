"""Regenerate the Carrick Tableland sample area (invented data) from its known model.

    python sample_unconformity/generate.py [--out FOLDER] [--no-alluvium]

Default output: this script's own folder. Deterministic. See README.md beside this script.
"""

from __future__ import annotations

import argparse
import dataclasses
from pathlib import Path

from mapsection.sample_unconformity import TABLELAND, generate


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", type=Path, default=Path(__file__).resolve().parent,
                        help="output folder (default: this script's folder)")
    parser.add_argument("--no-alluvium", action="store_true",
                        help="leave the valley alluvium (a cover unit) off the map")
    args = parser.parse_args()
    model = dataclasses.replace(TABLELAND, alluvium_below=None) if args.no_alluvium else TABLELAND
    for name, path in generate(args.out, model).items():
        print(f"wrote {name}: {path}")


if __name__ == "__main__":
    main()
