"""Numbers and counts in a finding's words, and distributions by area for notes."""

from __future__ import annotations

import numpy as np

from caselint.mesh.geometry import chunks


def plural(count: int, noun: str) -> str:
    """``1 face``, ``3 faces``."""
    return f"{count} {noun}" if count == 1 else f"{count} {noun}s"


def fmt(value: float, digits: int = 3) -> str:
    """A number for a sentence: ``6.67e5`` rather than ``6.67e+05``."""
    text = f"{value:.{digits}g}"
    if "e" in text:
        mantissa, exponent = text.split("e")
        text = f"{mantissa}e{int(exponent)}"
    return text


def settled(values):
    """``values`` (finite) rounded to 10 significant digits, vectorised.

    Ratios of lengths carry round-off of order 1e-14; a mesh designed exactly at a limit
    (layers growing by 1.2 against a limit of 1.2) must not cross it by round-off.
    """
    v = np.asarray(values, dtype=np.float64)
    if v.ndim == 0:
        return float(_settled(v))
    out = np.empty(v.shape)
    flat, into = v.reshape(-1), out.reshape(-1)
    # in cache-sized pieces: one value at a time, so the same result, without five
    # temporaries as long as a face array
    for sl in chunks(flat.size):
        into[sl] = _settled(flat[sl])
    return out


def _settled(v: np.ndarray) -> np.ndarray:
    nonzero = v != 0
    exponent = np.floor(np.log10(np.abs(np.where(nonzero, v, 1.0))))
    scale = 10.0 ** (9 - exponent)
    return np.where(nonzero, np.round(v * scale) / scale, 0.0)


def area_quantile(values: np.ndarray, areas: np.ndarray, q: float) -> float:
    """The smallest value below or at which a fraction ``q`` of the total area lies."""
    order = np.lexsort((np.arange(len(values)), values))
    cum = np.cumsum(areas[order])
    total = cum[-1]
    if total <= 0:
        return float(np.quantile(values, q))
    k = int(np.searchsorted(cum, q * total, side="left"))
    return float(values[order[min(k, len(values) - 1)]])


def area_share(mask: np.ndarray, areas: np.ndarray) -> float:
    """Percentage of the total area where ``mask`` holds (by count when areas vanish)."""
    total = float(areas.sum())
    if total <= 0:
        return 100.0 * float(np.count_nonzero(mask)) / max(len(mask), 1)
    return 100.0 * float(areas[mask].sum()) / total


def area_distribution(values: np.ndarray, areas: np.ndarray) -> str:
    """``5 % of the area below 0.41, median 0.5, 95 % below 0.62, largest 0.66``."""
    p5, p50, p95 = (area_quantile(values, areas, q) for q in (0.05, 0.5, 0.95))
    return (f"5 % of the area below {p5:.3g}, median {p50:.3g}, 95 % below {p95:.3g}, "
            f"smallest {values.min():.3g}, largest {values.max():.3g}")
