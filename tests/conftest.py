"""Shared test builders: a private copy of the sample area, and bad variants of its inputs.

Every builder writes into the test's ``tmp_path``; the sample area itself is never touched.
"""

from __future__ import annotations

import hashlib
import shutil
from dataclasses import dataclass
from pathlib import Path

import pytest

SAMPLE_AREA = Path(__file__).resolve().parents[1] / "sample_area"
SAMPLE_INPUTS = ("project.toml", "dem.tif", "geology.gpkg", "attitudes.csv")


@dataclass
class SampleCopy:
    """The sample area's inputs copied into ``root``, and an empty output folder ``out``."""

    root: Path
    out: Path

    @property
    def project(self) -> Path:
        return self.root / "project.toml"

    @property
    def dem(self) -> Path:
        return self.root / "dem.tif"

    @property
    def map(self) -> Path:
        return self.root / "geology.gpkg"

    @property
    def attitudes(self) -> Path:
        return self.root / "attitudes.csv"

    def edit_project(self, old: str, new: str, count: int = 1) -> Path:
        """Replace ``old`` by ``new`` in project.toml (``old`` must be there)."""
        text = self.project.read_text(encoding="utf-8")
        assert old in text, old
        self.project.write_text(text.replace(old, new, count), encoding="utf-8")
        return self.project

    def add_to_section(self, index: int, lines: str) -> Path:
        """Add key lines to the ``index``-th [[section]] table of project.toml."""
        text = self.project.read_text(encoding="utf-8")
        parts = text.split("[[section]]\n")
        parts[index + 1] = lines.rstrip("\n") + "\n" + parts[index + 1]
        self.project.write_text("[[section]]\n".join(parts), encoding="utf-8")
        return self.project

    def write(self, name: str, content: str | bytes) -> Path:
        p = self.root / name
        if isinstance(content, bytes):
            p.write_bytes(content)
        else:
            p.write_text(content, encoding="utf-8")
        return p


@pytest.fixture
def sample_copy(tmp_path: Path) -> SampleCopy:
    """The sample area's project, DEM, map and attitudes in tmp_path/inputs; tmp_path/out empty."""
    root = tmp_path / "inputs"
    root.mkdir()
    for name in SAMPLE_INPUTS:
        shutil.copy2(SAMPLE_AREA / name, root / name)
    out = tmp_path / "out"
    out.mkdir()
    return SampleCopy(root, out)


def snapshot(folder: Path) -> dict[str, str]:
    """sha256 of every file under ``folder``, hidden files included, by relative path."""
    return {str(p.relative_to(folder)): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.rglob("*")) if p.is_file()}


def everything_in(folder: Path) -> list[str]:
    """Every entry under ``folder`` (files and folders, hidden ones included)."""
    return sorted(str(p.relative_to(folder)) for p in folder.rglob("*"))


def write_dem_variant(src: Path, dst: Path, *, crs=..., transform=None, units: str | None = None,
                      shift: tuple[float, float] = (0.0, 0.0), scale: float = 1.0) -> Path:
    """A copy of the GeoTIFF ``src`` with another CRS (None: none), transform, unit type,
    a shift of its origin (map units) or its values multiplied by ``scale``."""
    import rasterio
    from affine import Affine

    with rasterio.open(src) as ds:
        profile = ds.profile
        data = ds.read(1)
    if crs is not ...:
        profile["crs"] = crs
    t = transform if transform is not None else profile["transform"]
    profile["transform"] = Affine.translation(*shift) * t
    if scale != 1.0:
        nd = profile.get("nodata")
        data = data.copy()
        valid = data != nd if nd is not None else slice(None)
        data[valid] = data[valid] * scale
    import warnings

    with warnings.catch_warnings():  # an identity transform is what some cases want
        warnings.simplefilter("ignore", rasterio.errors.NotGeoreferencedWarning)
        out = rasterio.open(dst, "w", **profile)
    with out:
        out.write(data, 1)
        if units is not None:
            out.units = (units,)
    return dst


def write_map_variant(src: Path, dst: Path, **layers) -> Path:
    """A copy of the GeoPackage ``src`` whose layers are replaced: ``name=GeoDataFrame``
    (or ``name=None`` to leave that layer out); the other layers are copied as they are."""
    import pyogrio

    names = [str(r[0]) for r in pyogrio.list_layers(src)]
    frames = {n: pyogrio.read_dataframe(src, layer=n) for n in names}
    frames.update(layers)
    for name, frame in frames.items():
        if frame is not None:
            pyogrio.write_dataframe(frame, dst, layer=name, driver="GPKG")
    return dst
