"""The shared helpers: angle wrapping, CRS comparison and cached transformers, notes."""

from __future__ import annotations

import numpy as np
import pyproj
import pytest

from mapsection.angles import angle_between, line_angle_between, wrap90, wrap180
from mapsection.crs import same_crs, transformer
from mapsection.notes import Notes


def test_wrap180_matches_the_complex_argument():
    a = np.linspace(-1000.0, 1000.0, 4001)
    # outside reference: numpy's complex argument of exp(i a), in (-180, 180]
    ref = np.degrees(np.angle(np.exp(1j * np.radians(a))))
    ref = np.where(np.isclose(ref, -180.0), 180.0, ref)
    assert np.allclose(wrap180(a), ref, atol=1e-9)
    assert float(wrap180(-180.0)) == 180.0 and float(wrap180(540.0)) == 180.0


def test_line_angles_wrap_modulo_180():
    a = np.linspace(-400.0, 400.0, 1601)
    w = wrap90(a)
    assert np.all((w > -90.0) & (w <= 90.0))
    # a line and its reverse are the same line: tan is 180-periodic (numpy's tan)
    assert np.allclose(np.tan(np.radians(w[np.abs(w) < 89])),
                       np.tan(np.radians(a[np.abs(w) < 89])))
    assert float(angle_between(350.0, 10.0)) == pytest.approx(20.0)
    assert float(line_angle_between(10.0, 190.0)) == pytest.approx(0.0)
    assert float(line_angle_between(0.0, 100.0)) == pytest.approx(80.0)


def test_same_crs_and_a_transformer_built_once():
    utm = pyproj.CRS("EPSG:32611")
    assert same_crs(utm, pyproj.CRS.from_wkt(utm.to_wkt()))
    assert same_crs(utm, None) and not same_crs(utm, "EPSG:4326")
    assert transformer(utm, "EPSG:32611") is None
    tr = transformer("EPSG:4326", utm)
    assert transformer(pyproj.CRS("EPSG:4326"), "EPSG:32611") is tr  # cached per CRS pair
    # outside reference: a transformer pyproj builds directly
    ref = pyproj.Transformer.from_crs("EPSG:4326", "EPSG:32611", always_xy=True)
    assert np.allclose(tr.transform(-115.6, 47.1), ref.transform(-115.6, 47.1))


def test_notes_log_and_warn():
    shown: list[str] = []
    notes = Notes(shown.append)
    notes.log("a")
    notes.warn("b")
    notes.warn("c", logged=False)
    assert notes.entries == ["a", "b"] and shown == ["b", "c"]
