"""The unconformity in the section figure: a wavy line along the erosion surface.

The FGDC geologic map symbolization standard (FGDC-STD-013-2006) lets a map use any symbol
that does not clash with its others provided it is explained on the sheet; we found no
cross-section symbol for an unconformity fixed by it, so the figure draws our own: a wavy
line along the preserved erosion surface, short-dashed where it is projected above the
ground (eroded), and the legend says "Unconformity". The wave is laid out in printed
millimetres, so it looks the same at any scale and vertical exaggeration.
"""

from __future__ import annotations

import numpy as np

WAVE_MM = 2.4  # the tool's default: wavelength of the wave, printed millimetres
AMPLITUDE_MM = 0.45  # its half-height


def wavy(xy: np.ndarray, m_per_mm_x: float, m_per_mm_y: float,
         wave_mm: float = WAVE_MM, amplitude_mm: float = AMPLITUDE_MM) -> np.ndarray:
    """A polyline (section metres) as a wavy line: resampled every tenth of a wavelength
    on the printed page and offset along its normal by a sine of the path length.

    Examples
    --------
    >>> out = wavy(np.array([[0.0, 0.0], [100.0, 0.0]]), 10.0, 10.0)
    >>> bool(np.allclose(out[[0, -1], 0], [0.0, 100.0]))
    True
    """
    p = np.column_stack([xy[:, 0] / m_per_mm_x, xy[:, 1] / m_per_mm_y])  # page mm
    seg = np.hypot(*np.diff(p, axis=0).T)
    s = np.concatenate([[0.0], np.cumsum(seg)])
    if s[-1] <= 0:
        return xy
    t = np.linspace(0.0, s[-1], max(int(s[-1] / (wave_mm / 10.0)) + 1, 2))
    q = np.column_stack([np.interp(t, s, p[:, 0]), np.interp(t, s, p[:, 1])])
    d = np.gradient(q, axis=0)
    n = np.column_stack([-d[:, 1], d[:, 0]])
    n /= np.maximum(np.hypot(n[:, 0], n[:, 1]), 1e-12)[:, None]
    q = q + amplitude_mm * np.sin(2 * np.pi * t / wave_mm)[:, None] * n
    return np.column_stack([q[:, 0] * m_per_mm_x, q[:, 1] * m_per_mm_y])


def legend_wave(x: float, y: float, width: float, height: float) -> tuple[np.ndarray, np.ndarray]:
    """The legend's sample of the wavy line, in the legend's own units."""
    xs = np.linspace(x, x + width, 41)
    return xs, y + 0.5 * height * np.sin(2 * np.pi * (xs - x) / (width / 2.5))
