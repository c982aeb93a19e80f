"""Discretisation error from a grid study: Richardson extrapolation and the Grid Convergence Index.

The procedure is that of Celik, Ghia, Roache, Freitas, Coleman and Raad, "Procedure for
Estimation and Reporting of Uncertainty Due to Discretization in CFD Applications", ASME J.
Fluids Eng. 130(7) 078001 (2008); the GCI and its safety factors are Roache's (J. Fluids
Eng. 116, 1994; Annu. Rev. Fluid Mech. 29, 1997). Index 1 is the finest mesh:

- h = (V/N)^(1/3) in 3-D, (A/N)^(1/2) in 2-D; r21 = h2/h1, r32 = h3/h2;
- e21 = phi2 - phi1, e32 = phi3 - phi2, s = sign(e32/e21);
- p = |ln|e32/e21| + q(p)| / ln r21 with q(p) = ln[(r21^p - s)/(r32^p - s)], solved by
  fixed-point iteration (q = 0 when r is constant);
- phi_ext = (r21^p phi1 - phi2)/(r21^p - 1); e_a = |(phi1 - phi2)/phi1|;
  e_ext = |(phi_ext - phi1)/phi_ext|; GCI_fine = Fs e_a/(r21^p - 1), Fs = 1.25 with three
  meshes and the observed order, Fs = 3 with two meshes and an assumed order;
- asymptotic range: GCI32 = Fs e_a32/(r32^p - 1) is about r21^p GCI21, so the ratio
  GCI32/(r21^p GCI21) is near 1 (for phi = phi0 + C h^p exactly it equals phi1/phi2).

The convergence type follows the ratio R = e21/e32 (Stern, Wilson, Coleman & Paterson,
J. Fluids Eng. 123, 2001; from memory): 0 < R < 1 monotonic, -1 < R < 0 oscillatory,
|R| >= 1 divergent. Every function works on several quantities at once (arrays of shape
``(Q,)``, values ``(Q, M)``); where the procedure breaks down for a quantity its results are
NaN and its message says why. Relative errors are fractions here, not percent.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Roache's safety factor for three or more meshes with the observed order.
FS_THREE_GRIDS = 1.25
#: Roache's safety factor for two meshes, or any study with an assumed order.
FS_TWO_GRIDS = 3.0
#: Differences smaller than this fraction of the largest |phi| count as zero: the values
#: then agree to round-off and carry no information about the order.
ZERO_DIFFERENCE = 1e-9
#: Fixed-point iteration for the apparent order: relative step that counts as converged,
#: and the most iterations tried.
ORDER_TOLERANCE = 1e-12
ORDER_MAX_ITERATIONS = 500

CONVERGENCE_TYPES = ("monotonic", "oscillatory", "divergent", "undetermined")


def representative_size(n_cells, total_volume, dim: int) -> np.ndarray:
    """Representative cell size h = (V/N)^(1/dim) (Celik 2008): m when V is m^3 (2-D: m^2)."""
    if dim not in (2, 3):
        raise ValueError(f"dim must be 2 or 3, got {dim}")
    n = np.asarray(n_cells, dtype=np.float64)
    v = np.asarray(total_volume, dtype=np.float64)
    if np.any(n <= 0) or np.any(v <= 0):
        raise ValueError("cell counts and volumes must be positive")
    return (v / n) ** (1.0 / dim)


def refinement_ratios(h) -> np.ndarray:
    """Ratios h[i+1]/h[i] of neighbouring sizes given finest first (all > 1 for a valid study)."""
    h = np.asarray(h, dtype=np.float64)
    return h[1:] / h[:-1]


def convergence_ratio(e21: np.ndarray, e32: np.ndarray) -> np.ndarray:
    """R = e21/e32 per quantity; NaN where e32 is zero."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(e32 != 0.0, e21 / np.where(e32 != 0.0, e32, 1.0), np.nan)


def classify(R: np.ndarray) -> tuple[str, ...]:
    """Convergence type per quantity from R = e21/e32 (NaN: undetermined)."""
    out = []
    for value in np.asarray(R, dtype=np.float64):
        if not np.isfinite(value) or value == 0.0:
            out.append("undetermined")
        elif abs(value) >= 1.0:
            out.append("divergent")
        elif value > 0.0:
            out.append("monotonic")
        else:
            out.append("oscillatory")
    return tuple(out)


def apparent_order(e21, e32, r21: float, r32: float, *, tolerance: float = ORDER_TOLERANCE,
                   max_iterations: int = ORDER_MAX_ITERATIONS) -> tuple[np.ndarray, np.ndarray]:
    """Observed order p by Celik's fixed-point iteration; returns (p, settled) per quantity.

    Needs e21 and e32 non-zero; p is NaN where they are zero or the iteration does not
    settle within ``max_iterations`` (``settled`` False).
    """
    e21 = np.atleast_1d(np.asarray(e21, dtype=np.float64))
    e32 = np.atleast_1d(np.asarray(e32, dtype=np.float64))
    usable = (e21 != 0.0) & (e32 != 0.0)
    safe21 = np.where(usable, e21, 1.0)
    safe32 = np.where(usable, e32, 1.0)
    s = np.sign(safe32 / safe21)
    log_ratio = np.log(np.abs(safe32 / safe21))
    ln_r21 = np.log(r21)
    p = np.abs(log_ratio) / ln_r21          # the start value is the constant-ratio answer
    settled = ~usable                       # nothing to iterate where unusable
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        for _ in range(max_iterations):
            q = np.log((r21**p - s) / (r32**p - s))
            p_new = np.abs(log_ratio + q) / ln_r21
            step = np.abs(p_new - p)
            p = np.where(settled, p, p_new)
            settled = settled | (np.isfinite(p_new) & (step <= tolerance * np.maximum(1.0, p_new)))
            if settled.all():
                break
    good = usable & settled & np.isfinite(p) & (p > 0.0)
    return np.where(good, p, np.nan), settled & usable


def extrapolate(phi_fine, phi_coarse, r: float, p) -> np.ndarray:
    """Richardson-extrapolated value (r^p phi_fine - phi_coarse)/(r^p - 1)."""
    rp = np.asarray(r, dtype=np.float64) ** np.asarray(p, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore"):
        return (rp * phi_fine - phi_coarse) / (rp - 1.0)


def relative_difference(phi_fine, phi_coarse) -> np.ndarray:
    """Approximate relative error |(phi_fine - phi_coarse)/phi_fine| (NaN where phi_fine = 0)."""
    phi_fine = np.asarray(phi_fine, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = np.abs((phi_fine - phi_coarse) / phi_fine)
    return np.where(phi_fine != 0.0, out, np.nan)


def gci(relative_error, r: float, p, safety_factor: float) -> np.ndarray:
    """Grid Convergence Index Fs e/(r^p - 1) (Roache 1994), in the unit of ``relative_error``."""
    rp = np.asarray(r, dtype=np.float64) ** np.asarray(p, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore"):
        return safety_factor * np.asarray(relative_error) / (rp - 1.0)


@dataclass(frozen=True)
class GciResult:
    """A grid study's results, one entry per quantity (arrays of shape ``(Q,)``).

    ``h`` and ``phi`` (``(Q, M)``) are finest first. Relative errors and GCIs are fractions;
    a NaN marks a value the procedure cannot give, with the reason in ``messages``.
    ``apparent_order`` is the observed order (NaN with two meshes); ``order`` is the one
    used for extrapolation (observed, or the assumed one of a two-mesh study).
    """

    h: np.ndarray
    phi: np.ndarray
    refinement_ratios: np.ndarray
    safety_factor: float
    order_assumed: bool
    apparent_order: np.ndarray
    order: np.ndarray
    ratio: np.ndarray                    # R = e21/e32; NaN with two meshes
    convergence: tuple[str, ...]
    extrapolated_value: np.ndarray
    relative_error: np.ndarray           # e_a21
    extrapolated_error: np.ndarray       # e_ext21
    gci_fine: np.ndarray                 # GCI21, relative
    gci_fine_absolute: np.ndarray        # Fs |e21| / (r21^p - 1), in the unit of phi
    gci_coarse: np.ndarray               # GCI32, relative; NaN with two meshes
    asymptotic_ratio: np.ndarray         # GCI32 / (r21^p GCI21)
    messages: tuple[str, ...]

    @property
    def n_quantities(self) -> int:
        """Number of quantities studied."""
        return int(self.phi.shape[0])


def _check_inputs(h, phi) -> tuple[np.ndarray, np.ndarray]:
    h = np.asarray(h, dtype=np.float64)
    phi = np.atleast_2d(np.asarray(phi, dtype=np.float64))
    if h.ndim != 1 or phi.shape[1] != h.size:
        raise ValueError(f"phi must have one column per mesh: h has {h.size} entries, "
                         f"phi has shape {phi.shape}")
    if not (np.all(np.isfinite(h)) and np.all(np.isfinite(phi))):
        raise ValueError("sizes and values must be finite")
    if np.any(h <= 0) or np.any(np.diff(h) <= 0):
        raise ValueError(f"sizes must be positive and strictly increasing (finest first), got {h}")
    return h, phi


def _zero(diff: np.ndarray, phi: np.ndarray) -> np.ndarray:
    """Differences that are zero to round-off of the values."""
    scale = np.max(np.abs(phi), axis=1)
    return np.abs(diff) <= ZERO_DIFFERENCE * scale


def three_grid(h, phi, *, safety_factor: float = FS_THREE_GRIDS) -> GciResult:
    """Celik 2008 on the three finest meshes: observed order, extrapolation, errors, GCI.

    ``h`` is ``(M,)`` finest first (M >= 3; only the first three are used); ``phi`` is
    ``(M,)`` or ``(Q, M)``. Raises ValueError for malformed input, never for a study that
    does not converge: that is a result, with a message.
    """
    h, phi = _check_inputs(h, phi)
    if h.size < 3:
        raise ValueError(f"the three-mesh procedure needs three meshes, got {h.size}")
    h, phi = h[:3], phi[:, :3]
    r21, r32 = refinement_ratios(h)
    e21 = phi[:, 1] - phi[:, 0]
    e32 = phi[:, 2] - phi[:, 1]
    zero21, zero32 = _zero(e21, phi), _zero(e32, phi)
    e21 = np.where(zero21, 0.0, e21)
    e32 = np.where(zero32, 0.0, e32)
    R = convergence_ratio(e21, e32)
    kinds = classify(R)
    p, settled = apparent_order(e21, e32, r21, r32)
    usable = np.array([k in ("monotonic", "oscillatory") for k in kinds]) & np.isfinite(p)
    p = np.where(usable, p, np.nan)
    return _finish(h, phi, p, p, R, kinds, safety_factor, False,
                   _messages3(kinds, zero21, zero32, settled, R, phi))


def two_grid(h, phi, order: float, *, safety_factor: float = FS_TWO_GRIDS) -> GciResult:
    """GCI from the two finest meshes with an assumed order ``order`` and Fs = 3 (Roache 1994)."""
    h, phi = _check_inputs(h, phi)
    if h.size < 2:
        raise ValueError(f"a grid study needs at least two meshes, got {h.size}")
    if not (np.isfinite(order) and order > 0):
        raise ValueError(f"the assumed order must be a positive number, got {order}")
    h, phi = h[:2], phi[:, :2]
    n = phi.shape[0]
    e21 = phi[:, 1] - phi[:, 0]
    zero21 = _zero(e21, phi)
    p = np.where(zero21, np.nan, float(order))
    messages = tuple(
        ("the two values agree to round-off: the difference carries no information about "
         "the discretisation error" if z else "")
        for z in zero21)
    return _finish(h, phi, np.full(n, np.nan), p, np.full(n, np.nan), ("undetermined",) * n,
                   safety_factor, True, messages)


def _finish(h, phi, observed, p, R, kinds, fs, assumed, messages) -> GciResult:
    """Extrapolation, errors and GCIs from the order ``p`` (NaN where it is undefined)."""
    r = refinement_ratios(h)
    r21 = r[0]
    phi_ext = extrapolate(phi[:, 0], phi[:, 1], r21, p)
    e_a = relative_difference(phi[:, 0], phi[:, 1])
    with np.errstate(divide="ignore", invalid="ignore"):
        e_ext = np.where(np.isfinite(phi_ext) & (phi_ext != 0.0),
                         np.abs((phi_ext - phi[:, 0]) / phi_ext), np.nan)
    gci21 = gci(e_a, r21, p, fs)
    gci21_abs = gci(np.abs(phi[:, 1] - phi[:, 0]), r21, p, fs)
    if h.size >= 3:
        gci32 = gci(relative_difference(phi[:, 1], phi[:, 2]), r[1], p, fs)
        with np.errstate(divide="ignore", invalid="ignore"):
            asym = gci32 / (r21**p * gci21)
    else:
        gci32 = asym = np.full(phi.shape[0], np.nan)
    extra = []
    for i, text in enumerate(messages):
        if np.isfinite(p[i]) and phi[i, 0] == 0.0:
            text = _join(text, "phi1 = 0, so the relative errors and the relative GCI are "
                               "undefined; use the absolute GCI")
        extra.append(text)

    def clean(a):
        a = np.asarray(a, dtype=np.float64)
        return np.where(np.isfinite(a), a, np.nan)

    return GciResult(
        h=h, phi=phi, refinement_ratios=r, safety_factor=fs, order_assumed=assumed,
        apparent_order=clean(observed), order=clean(p), ratio=clean(R), convergence=tuple(kinds),
        extrapolated_value=clean(phi_ext), relative_error=clean(e_a),
        extrapolated_error=clean(e_ext),
        gci_fine=clean(gci21), gci_fine_absolute=clean(gci21_abs), gci_coarse=clean(gci32),
        asymptotic_ratio=clean(asym), messages=tuple(extra),
    )


def _join(a: str, b: str) -> str:
    return f"{a}; {b}" if a else b


def _messages3(kinds, zero21, zero32, settled, R, phi) -> tuple[str, ...]:
    """Why the procedure breaks down (or what to watch) for each quantity, in plain words."""
    out = []
    for i, kind in enumerate(kinds):
        if zero21[i] and zero32[i]:
            text = ("the three values agree to round-off (e21 = e32 = 0): no order can be "
                    "observed; the quantity does not change with the mesh at these sizes")
        elif zero21[i]:
            text = ("the two finest values agree to round-off (e21 = 0) while the coarsest "
                    "differs: the procedure does not apply (Celik 2008); this may be "
                    "oscillatory convergence or a chance crossing — add a mesh or use another "
                    "quantity")
        elif zero32[i]:
            text = ("the two coarsest values agree to round-off (e32 = 0) while the finest "
                    "differs: the procedure does not apply (Celik 2008); add a mesh or check "
                    "iterative convergence")
        elif kind == "divergent":
            word = "oscillating without decay" if R[i] < 0 else "growing"
            text = (f"divergent: the differences are {word} with refinement "
                    f"(R = e21/e32 = {R[i]:.4g}, |R| >= 1), so the meshes are not in the "
                    "asymptotic range; no order, extrapolation or GCI — check iterative "
                    "convergence and refine further")
        elif not settled[i]:
            text = ("the fixed-point iteration for the apparent order did not settle in "
                    f"{ORDER_MAX_ITERATIONS} iterations; no order, extrapolation or GCI")
        elif kind == "oscillatory":
            text = (f"oscillatory convergence (R = e21/e32 = {R[i]:.4g}): the GCI is less "
                    "reliable than for monotonic convergence (Celik 2008)")
        else:
            text = ""
        out.append(text)
    return tuple(out)
