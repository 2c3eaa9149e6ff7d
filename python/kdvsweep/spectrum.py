"""Soliton content of initial data: the discrete spectrum of the inverse scattering transform.

KdV ``u_t + 6 u u_x + u_xxx = 0``: the solitons emerging from ``u0`` are the bound states of
``-psi'' - u0 psi = -kappa^2 psi`` (potential ``-u0``; for KdV(-) ``u_t - 6 u u_x + u_xxx = 0``
it is ``+u0``), amplitude ``2 kappa^2``, speed ``4 kappa^2`` (Gardner, Greene, Kruskal & Miura
1967; Pöschl & Teller 1933 for ``A sech^2 x``). Focusing mKdV ``u_t + 6 u^2 u_x + u_xxx = 0``: the eigenvalues of
the Zakharov-Shabat (ZS) problem ``v1' = -i zeta v1 + q v2``, ``v2' = i zeta v2 - q v1``,
``q = u0``; ``zeta = i kappa`` is a soliton of amplitude ``2 kappa`` (either polarity) and speed
``4 kappa^2``, a pair ``zeta = +-xi + i kappa`` a breather (Wadati 1973; Satsuma & Yajima 1974). General
``a`` (or ``b``) and ``d`` are mapped exactly by ``u = alpha w(x, d t)``, ``alpha = 6 d / a``
(KdV) or ``sqrt(6 d / b)`` (mKdV): :attr:`kdvsweep.Equation.soliton_form`.

Method
------
Fourier collocation on the grid's periodic domain ``[-L/2, L/2)``, dense solves with scipy.linalg.
Fourier, not mapped Chebyshev: the data already live on the simulation's Fourier grid (no
re-interpolation), convergence is exponential for smooth data, and the periodic box moves an
eigenvalue only by about ``exp(-kappa L)``, which is estimated (``box_error``). ZS is solved in
the real form ``lam v = [[D, -Q], [-Q, -D]] v``, ``lam = -i zeta = kappa - i xi`` (real ``q``):
cheaper than a complex solve, and solitons come out as exactly real ``lam``.

Two resolutions. The *coarse* problem has the fewest points (at least 64, at most the grid's
``n``) carrying every Fourier mode of the profile above ``1e-2 tol`` of the largest: simulation
grids are usually much finer than the initial data need, and the cost is cubic. It gives the
candidates (ZS: all eigenvalues, then eigenvectors of the candidates only, by inverse iteration).
The *fine* problem has twice as many points, the profile spectrally
interpolated (zero-padded); each candidate is refined on it by inverse iteration (shift = coarse
eigenvalue, start = interpolated eigenvector), which converges to the nearest fine eigenvalue.
The fine value is reported, ``|coarse - fine|`` is its ``resolution_error``.

Filters against spurious eigenvalues: (1) KdV ``lam < 0``; ZS ``Re lam > 0`` and ``|xi|`` below
a quarter of the coarse top wavenumber (collocating the first-order operator makes spurious
eigenvalues near the Nyquist wavenumber); (2) ``kappa L > 4``: weaker states are not told apart
from the periodic box's continuum (its ZS eigenvalues have ``Re lam`` of a few ``1/L``) and are
not reported; (3) localisation: the mean ``|v|^2`` over the outer tenth of the domain must be below
``1e-2`` of the peak ``|v|^2`` (continuum states fill the box); (4) a state moving by more than
1 % between the resolutions is unresolved and dropped with a :class:`ResolutionWarning`. Kept
states with ``resolution_error`` or ``|box_error|`` above ``tol`` (default ``1e-8``, absolute, in
units of ``kappa``) raise a :class:`ResolutionWarning` or :class:`DomainWarning`.

``box_error`` estimates ``kappa_box - kappa_line`` to first order from the Wronskian of the line
state with the periodic one across one period (derived for this module). With ``phi`` the periodic
eigenvector and ``e`` the domain edge: ``(phi_e^2 - phi'_e^2 / kappa^2) / (2 int phi^2)``
(Schrödinger), ``Re(phi1_e phi2_e / int phi1 phi2)`` (ZS). It assumes ``u0 ~ 0`` at the edge.

Discontinuous data (a box): the samples define the potential; both resolutions then agree with
each other but differ from the sharp profile by ``O(dx^2)``, which the two-resolution estimate
cannot see. A :class:`ResolutionWarning` says so when the profile's Fourier coefficients in the
top eighth of the band exceed ``tol`` relative to the largest.

Bad input: non-finite values raise :class:`~kdvsweep.exceptions.ConfigError`, and so does a
profile that has not decayed at the domain edges (``|u0|`` there above ``1e-6`` of ``max |u0|``):
the discrete spectrum of the line describes data that decay, and for data that fill the periodic
box (a cosine, say) the collocated problem returns counts that change when the same data are
shifted. Such data are periodic-problem data (the band edges of Hill's equation), which this
module does not solve.

Cost: one dense solve of the coarse size ``m`` (Schrödinger ``m``, ZS ``2m``) and one LU of twice
that size per state; ``m`` of a few hundred takes well under a second on one core. Multithreaded
BLAS on an oversubscribed machine can be ten times slower than one thread
(``OPENBLAS_NUM_THREADS=1``), e.g. with several sweep workers per node.

Polarity (mKdV) is ``-sign(int v1 v2 dx)`` of the real eigenvector. For an isolated soliton of
polarity ``s``, ``x -> -x`` symmetry gives ``v2(-x) = -s v1(x)`` with ``v1 > 0``, so it is exact
there; the tests check it on an overlapping opposite-polarity 2-soliton.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np

from .exceptions import ConfigError, ShapeError
from .model import Equation, Grid, SolitonForm

if TYPE_CHECKING:
    import pandas as pd

DEFAULT_TOL = 1e-8
#: Fourier coefficients below this fraction of ``tol`` (relative to the largest) are not carried
#: by the coarse problem: dropping them moves an eigenvalue by far less than ``tol``.
SPECTRUM_FLOOR = 1e-2
#: Decay check: ``|u0|`` at the domain edges relative to ``max |u0|``.
EDGE_LEVEL = 1e-6
#: Localisation: mean ``|v|^2`` over the outer tenth of the domain relative to the peak ``|v|^2``.
MAX_EDGE_WEIGHT = 1e-2
#: Relative change between the two resolutions above which a state is unresolved (dropped).
UNRESOLVED = 1e-2
MIN_POINTS = 64
#: Inverse-iteration steps at most (the shift is already within the coarse error of the value).
_REFINE_STEPS = 12
#: States decaying by less than ``exp(-MIN_DECAY)`` across the box (``kappa L < MIN_DECAY``) are
#: not told apart from the periodic box's continuum (whose ZS eigenvalues have ``Re lam`` of a few
#: ``1/L``) and are not reported.
MIN_DECAY = 4.0
#: Largest dense matrix dimension solved (cost is cubic: about a minute at this size).
MAX_DIMENSION = 8192


class DomainWarning(UserWarning):
    """The domain is too small for the data: a state's periodic-box error is above tol."""


class ResolutionWarning(UserWarning):
    """An eigenvalue is not converged to tol in resolution, or the profile is not resolved."""


def breather_speeds(kappa: float, xi: float, d: float = 1.0) -> tuple[float, float, float]:
    """Envelope speed, carrier speed and internal frequency of the breather ``+-xi + i kappa``.

    The canonical breather of ``u_t + 6 u^2 u_x + u_xxx = 0`` is
    ``u = 2 d/dx arctan[(a/b) cos(theta) / cosh(R)]``, ``a = 2 kappa``, ``b = 2 xi``,
    ``theta = b (x - (3a^2 - b^2) t)``, ``R = a (x - (a^2 - 3b^2) t)`` (the Hirota 2-soliton with
    complex conjugate wavenumbers: Wadati 1973; Lamb 1980, from memory). So the envelope moves at
    ``4 (kappa^2 - 3 xi^2)``, the carrier at ``4 (3 kappa^2 - xi^2)``, and seen from the envelope
    the phase turns at ``b (v_carrier - v_envelope) = 16 xi (kappa^2 + xi^2)``; all three scale
    with ``d`` (``t' = d t``).
    """
    envelope = 4.0 * d * (kappa * kappa - 3.0 * xi * xi)
    carrier = 4.0 * d * (3.0 * kappa * kappa - xi * xi)
    return envelope, carrier, 2.0 * xi * (carrier - envelope)


@dataclass(frozen=True)
class Breather:
    """A complex Zakharov-Shabat pair ``zeta = +-xi + i kappa`` (focusing mKdV), physical units.

    ``envelope_speed``, ``carrier_speed`` and ``frequency`` (the internal frequency in the
    envelope's frame) are :func:`breather_speeds`.
    """

    kappa: float
    xi: float
    envelope_speed: float
    carrier_speed: float
    resolution_error: float
    box_error: float
    frequency: float = float("nan")


@dataclass(frozen=True)
class SolitonContent:
    """The solitons (and mKdV breathers) predicted for an initial profile.

    Attributes
    ----------
    equation
        ``"kdv"`` or ``"mkdv"``: the spectral problem solved.
    kappas
        Spectral parameters, descending (KdV ``kappa``, mKdV ``Im zeta``), canonical units.
    amplitudes
        Signed peak value of each emerging soliton in the equation's own ``u``
        (``alpha 2 kappa^2`` for KdV, ``polarity |alpha| 2 kappa`` for mKdV).
    speeds
        ``4 d kappa^2``.
    polarity
        mKdV: +1 or -1 per soliton; KdV: the sign of ``alpha`` (elevation or depression).
    breathers
        mKdV complex pairs, largest ``kappa`` first; empty for KdV.
    resolution_error, box_error
        Per soliton: ``|kappa_coarse - kappa_fine|`` and the estimated periodic-box shift.
    points
        ``(coarse, fine)`` numbers of collocation points.
    tol
        The tolerance the warnings were checked against.
    method
        One line saying how the numbers were obtained.
    """

    equation: str
    kappas: np.ndarray
    amplitudes: np.ndarray
    speeds: np.ndarray
    polarity: np.ndarray
    breathers: tuple[Breather, ...]
    resolution_error: np.ndarray
    box_error: np.ndarray
    points: tuple[int, int]
    tol: float
    method: str = field(compare=False)

    def __post_init__(self) -> None:
        for name in ("kappas", "amplitudes", "speeds", "polarity", "resolution_error", "box_error"):
            arr = np.array(getattr(self, name), dtype=np.float64)
            arr.setflags(write=False)
            object.__setattr__(self, name, arr)

    def __len__(self) -> int:
        return int(self.kappas.size)

    def table(self) -> pd.DataFrame:
        """One row per soliton (``kind = "soliton"``, tallest first), then one per breather.

        Columns: ``kind``, ``soliton`` (index), ``kappa``, ``xi`` (0 for solitons), ``amplitude``
        (NaN for breathers), ``speed`` (envelope speed for breathers), ``polarity``,
        ``resolution_error``, ``box_error``.
        """
        rows = [
            {
                "kind": "soliton",
                "soliton": i,
                "kappa": float(self.kappas[i]),
                "xi": 0.0,
                "amplitude": float(self.amplitudes[i]),
                "speed": float(self.speeds[i]),
                "polarity": int(self.polarity[i]),
                "resolution_error": float(self.resolution_error[i]),
                "box_error": float(self.box_error[i]),
            }
            for i in range(len(self))
        ]
        rows += [
            {
                "kind": "breather",
                "soliton": j,
                "kappa": b.kappa,
                "xi": b.xi,
                "amplitude": float("nan"),
                "speed": b.envelope_speed,
                "polarity": 0,
                "resolution_error": b.resolution_error,
                "box_error": b.box_error,
            }
            for j, b in enumerate(self.breathers)
        ]
        columns = [
            "kind",
            "soliton",
            "kappa",
            "xi",
            "amplitude",
            "speed",
            "polarity",
            "resolution_error",
            "box_error",
        ]
        import pandas as pd

        return pd.DataFrame(rows, columns=columns)


# ----------------------------------------------------------------------------- the equation


@dataclass(frozen=True)
class _Form:
    """The spectral problem of an equation and the scaling onto its canonical form."""

    kind: str  # "kdv" or "mkdv"
    alpha: float  # u = alpha w, w canonical
    d: float  # t' = d t
    focusing: bool


def _form(equation: str | Equation) -> _Form:
    eq = Equation.coerce(equation, "bound_states")
    if eq.perturbed:
        raise ConfigError(
            f"bound_states: equation {eq.name!r} has perturbation terms (f={eq.f}, g={eq.g}, "
            f"v={eq.v}); expected an integrable KdV or mKdV equation (f = g = v = 0)"
        )
    solitons = eq.soliton_form_or_none()
    if solitons is not None and solitons.family != "gardner":
        return _Form(solitons.family, solitons.alpha, solitons.d, True)
    if eq.family == "mkdv" and eq.d != 0:  # defocusing: ZS is self-adjoint, no solitons
        return _Form("mkdv", float(np.sqrt(abs(6.0 * eq.d / eq.b))), eq.d, False)
    raise ConfigError(
        f"bound_states: equation {eq.name!r} ({eq.describe()}) has no spectral problem here; "
        "expected KdV (a != 0, b = 0, d != 0) or mKdV (a = 0, b != 0, d != 0) (Gardner's is the "
        "mKdV problem on a non-zero background, not implemented)"
    )


# ----------------------------------------------------------------------------- input checks


def _profile(u0: object, grid: Grid) -> np.ndarray:
    if not isinstance(grid, Grid):
        raise ConfigError(f"bound_states: grid must be a kdvsweep.Grid, got {type(grid).__name__}")
    arr = np.asarray(u0)
    if arr.dtype.kind not in "fiu":
        raise ShapeError(f"bound_states: u0 must be a real numeric array, got dtype {arr.dtype}")
    if arr.ndim != 1 or arr.shape[0] != grid.n:
        raise ShapeError(
            f"bound_states: u0 must be 1-D of length {grid.n} (the grid's n), got shape {arr.shape}"
        )
    arr = np.ascontiguousarray(arr, dtype=np.float64)
    bad = np.flatnonzero(~np.isfinite(arr))
    if bad.size:
        raise ConfigError(
            f"bound_states: u0 must be finite; index {bad[0]} is {arr[bad[0]]} "
            f"({bad.size} non-finite values)"
        )
    return arr


def _check_decay(u: np.ndarray) -> None:
    """Refuse data that have not decayed at the domain edges (periodic data: module notes)."""
    peak = float(np.max(np.abs(u)))
    edge = float(max(abs(u[0]), abs(u[-1]), abs(u[1]), abs(u[-2])))
    if edge > EDGE_LEVEL * peak:
        raise ConfigError(
            f"bound_states: u0 has not decayed at the domain edges (|u0| = {edge:.3g} there, "
            f"{edge / peak:.2g} of max |u0| = {peak:.3g}; expected below {EDGE_LEVEL:g} of it): "
            "the spectrum of the line does not describe periodic data (its soliton count changes "
            "when the same data are shifted); use a longer domain or data that decay to zero "
            "before the edges"
        )


# ----------------------------------------------------------------------------- discretisation


def _coarse_points(u: np.ndarray, tol: float) -> tuple[int, float]:
    """Points carrying every mode above the floor, and the top-eighth spectral level of ``u``."""
    n = u.size
    mag = np.abs(np.fft.rfft(u))
    top = float(mag.max())
    if top == 0.0:
        return min(n, MIN_POINTS), 0.0
    live = np.flatnonzero(mag > max(SPECTRUM_FLOOR * tol, 1e-14) * top)
    m = 2 * int(live[-1]) + 2
    m += (-m) % 8
    level = float(mag[-max(1, n // 16) :].max() / top)
    return min(n, max(MIN_POINTS, m)), level


def _resample(u: np.ndarray, m: int) -> np.ndarray:
    """The trigonometric interpolant of ``u`` sampled on ``m`` points (``m`` even)."""
    n = u.size
    if m == n:
        return u.copy()
    spec = np.fft.rfft(u)
    out = np.zeros(m // 2 + 1, dtype=complex)
    if m > n:
        out[: n // 2 + 1] = spec
        out[n // 2] *= 0.5  # the Nyquist cosine splits between +-n/2
    else:
        out[:] = spec[: m // 2 + 1]
        out[m // 2] = 2.0 * spec[m // 2].real  # +-m/2 fold onto the new Nyquist cosine
    return np.fft.irfft(out, m) * (m / n)


def _derivative_matrix(m: int, length: float, order: int) -> np.ndarray:
    """Fourier collocation ``d^order/dx^order`` on ``m`` points: the circulant of the symbol.

    First order drops the Nyquist mode (its derivative is not representable), so the matrix is
    real antisymmetric; second order keeps it (``-k_N^2``) and is real symmetric.
    """
    import scipy.linalg as sla  # loaded on first use, not on import

    k = 2.0 * np.pi / length * np.arange(m // 2 + 1)
    symbol = (1j * k) ** order
    if order % 2:
        symbol[-1] = 0.0
    column = np.fft.irfft(symbol, m)
    return sla.circulant(column)


def _edge_weight(power: np.ndarray) -> np.ndarray:
    """Mean of ``power`` (points x states) over the outer tenth of the domain, over its peak."""
    m = power.shape[0]
    band = max(2, m // 20)
    edges = np.concatenate([power[:band], power[-band:]])
    return edges.mean(axis=0) / power.max(axis=0)


@dataclass(frozen=True)
class _States:
    """Localised states of the coarse problem."""

    lam: np.ndarray  # eigenvalues: KdV kappa; ZS lam = -i zeta = kappa - i xi
    vectors: np.ndarray  # (points x states); ZS stacks v1 over v2
    box: np.ndarray  # periodic-box shift estimates of lam
    polarity: np.ndarray  # ZS: +-1 per state; KdV: ones


def _schrodinger_matrix(w: np.ndarray, length: float) -> np.ndarray:
    """``-d^2/dx^2 - w`` (symmetric)."""
    h = -_derivative_matrix(w.size, length, 2)
    h[np.diag_indices(w.size)] -= w
    return 0.5 * (h + h.T)  # symmetric to round-off; exactly so for eigh


def _zs_matrix(q: np.ndarray, length: float) -> np.ndarray:
    """Real form of focusing ZS: ``lam v = [[D, -Q], [-Q, -D]] v`` with ``lam = -i zeta``."""
    d1 = _derivative_matrix(q.size, length, 1)
    qm = np.diag(q)
    return np.block([[d1, -qm], [-qm, -d1]])


def _schrodinger_states(w: np.ndarray, length: float) -> _States:
    import scipy.linalg as sla  # loaded on first use, not on import

    m = w.size
    top = -((MIN_DECAY / length) ** 2)  # kappa > MIN_DECAY / L
    e, v = sla.eigh(_schrodinger_matrix(w, length), subset_by_value=(-np.inf, top))
    keep = _edge_weight(v**2) < MAX_EDGE_WEIGHT
    kappa, v = np.sqrt(-e[keep]), v[:, keep]
    dv = _derivative_matrix(m, length, 1)[0] @ v  # phi' at the edge x = -L/2
    box = (v[0] ** 2 - (dv / kappa) ** 2) / (2.0 * (length / m) * np.sum(v**2, axis=0))
    return _States(kappa, v, box, np.ones_like(kappa))


def _zs_states(q: np.ndarray, length: float) -> _States:
    import scipy.linalg as sla  # loaded on first use, not on import

    m = q.size
    a = _zs_matrix(q, length)
    lam = sla.eig(a, right=False)
    # Eigenvectors only for the few candidates (inverse iteration): a full eigenvector solve costs
    # more than the eigenvalues themselves. One member per breather pair (xi >= 0); a near-real
    # pair (two equal solitons far apart) keeps both members.
    k_top = np.pi * m / length
    floor = MIN_DECAY / length
    cand = (lam.real > floor) & (np.abs(lam.imag) < 0.25 * k_top) & (lam.imag <= 1e-3 * floor)
    start = np.random.default_rng(0).standard_normal(2 * m)
    found = [_inverse_iteration(a, c, start) for c in lam[cand]]
    if not found:
        return _States(np.zeros(0, complex), np.zeros((2 * m, 0)), np.zeros(0), np.zeros(0))
    lam = np.array([f[0] for f in found])
    v = np.array([f[1] for f in found]).T
    local = _edge_weight(np.abs(v[:m]) ** 2 + np.abs(v[m:]) ** 2) < MAX_EDGE_WEIGHT
    lam, v = lam[local], v[:, local]
    v1, v2 = v[:m], v[m:]
    overlap = (length / m) * np.sum(v1 * v2, axis=0)
    box = v1[0] * v2[0] / overlap
    # A real eigenvalue of a real matrix has a real eigenvector, so the overlap's sign is defined.
    polarity = np.where(overlap.real < 0, 1.0, -1.0)
    return _States(lam, v, box, polarity)


def _inverse_iteration(
    a: np.ndarray, shift: complex, start: np.ndarray
) -> tuple[complex, np.ndarray]:
    """The eigenvalue of ``a`` nearest ``shift`` and its eigenvector, by inverse iteration.

    Only a few eigenpairs are wanted (the ZS candidates, and the fine eigenvalue next to each
    coarse one); one factorisation costs a small fraction of a dense eigensolve.
    """
    import scipy.linalg as sla  # loaded on first use, not on import

    # A real eigenvalue of a real matrix has a real eigenvector: stay in real arithmetic then.
    # The shift is moved off the value by 1e-10 relative so the factor is never exactly singular.
    real = np.imag(shift) == 0
    sigma: float | complex = float(np.real(shift)) if real else complex(shift)
    sigma += 1e-10 * max(1.0, abs(sigma))
    x = np.real(start) if real else start.astype(complex)
    lu = sla.lu_factor(a - sigma * np.eye(a.shape[0]), check_finite=False)
    x = x / np.linalg.norm(x)
    value = complex(sigma)
    for _ in range(_REFINE_STEPS):
        y = sla.lu_solve(lu, x, check_finite=False)
        new = sigma + np.vdot(x, x) / np.vdot(x, y)  # y ~ x / (lam - sigma)
        x = y / np.linalg.norm(y)
        done = abs(new - value) <= 4.0 * np.finfo(float).eps * max(1.0, abs(new))
        value = complex(new)
        if done:
            break
    return value, x


def _interpolate(vectors: np.ndarray, m: int, components: int) -> np.ndarray:
    """Spectrally interpolate stacked eigenvector components (points x states) to ``m`` points."""
    parts = np.split(vectors, components, axis=0)
    out = []
    for part in parts:
        cols = [
            _resample(c.real, m) + (1j * _resample(c.imag, m) if np.iscomplexobj(c) else 0.0)
            for c in part.T
        ]
        out.append(np.array(cols).T)
    return np.concatenate(out, axis=0)


# ----------------------------------------------------------------------------- the solver


def bound_states(
    u0: object,
    grid: Grid,
    equation: str | Equation = "kdv",
    *,
    tol: float = DEFAULT_TOL,
) -> SolitonContent:
    """The solitons (and mKdV breathers) that emerge from the initial profile ``u0``.

    Parameters
    ----------
    u0
        The profile on ``grid.x`` (length ``grid.n``, finite, decayed at the domain edges to
        ``EDGE_LEVEL`` of its peak).
    grid
        The periodic grid of ``u0``.
    equation
        ``"kdv"``, ``"kdv-"``, ``"mkdv"``, ``"mkdv-"`` or an unperturbed KdV/mKdV
        :class:`~kdvsweep.Equation` (any ``a`` or ``b`` and ``d``).
    tol
        Accuracy asked of each ``kappa`` (absolute); see the module notes for the checks.

    Returns
    -------
    SolitonContent
        Solitons tallest first, their error estimates and the method used.

    Raises
    ------
    ConfigError
        Non-finite ``u0``, ``u0`` not decayed at the domain edges (periodic data), a bad ``tol``,
        or an equation without a spectral problem here.
    ShapeError
        ``u0`` is not a real 1-D array of length ``grid.n``.

    Warns
    -----
    DomainWarning
        A kept state's periodic-box error exceeds ``tol``.
    ResolutionWarning
        The profile is not resolved on the grid, a state's resolution error exceeds ``tol``, or a
        state was dropped as unresolved.
    """
    form = _form(equation)
    u = _profile(u0, grid)
    if isinstance(tol, bool) or not (isinstance(tol, int | float) and np.isfinite(tol) and tol > 0):
        raise ConfigError(f"bound_states: tol must be a positive number, got {tol!r}")
    _check_decay(u)
    if form.kind == "mkdv" and not form.focusing:
        empty = np.zeros(0)
        return SolitonContent(
            equation="mkdv",
            kappas=empty,
            amplitudes=empty,
            speeds=empty,
            polarity=empty,
            breathers=(),
            resolution_error=empty,
            box_error=empty,
            points=(0, 0),
            tol=float(tol),
            method="defocusing mKdV: the Zakharov-Shabat operator is self-adjoint, so it has no "
            "eigenvalues off the real axis and the data carry no solitons (nothing solved)",
        )
    w = u / form.alpha  # canonical data: KdV(+) potential -w, or the ZS potential q = w
    coarse_m, level = _coarse_points(w, tol)
    fine_m = 2 * coarse_m
    dim = fine_m * (2 if form.kind == "mkdv" else 1)
    if dim > MAX_DIMENSION:
        raise ConfigError(
            f"bound_states: the check problem would be a dense {dim} x {dim} eigenproblem "
            f"(the profile needs {coarse_m} points on L = {grid.length:g}); expected at most "
            f"{MAX_DIMENSION}: use a coarser grid or a shorter domain"
        )
    method = (
        f"Fourier collocation, {'Schrödinger' if form.kind == 'kdv' else 'Zakharov-Shabat'} "
        f"on L = {grid.length:g}, {coarse_m} and {fine_m} points"
    )
    if level > tol:
        warnings.warn(
            f"bound_states: u0 is not resolved on the grid (Fourier coefficients in the top "
            f"eighth of the band reach {level:.2g} of the largest; expected below tol = {tol:g}): "
            "the samples define the potential, and the error against a sharp profile can exceed "
            "the two-resolution estimate (O(dx^2) for a jump)",
            ResolutionWarning,
            stacklevel=2,
        )
    lam, err, box, polarity = _solve(form.kind, w, grid.length, coarse_m, fine_m)
    _warn_accuracy(lam.real, err, box.real, tol, coarse_m, fine_m)
    breathers: tuple[Breather, ...] = ()
    if form.kind == "kdv":
        kappas = lam.real
        polarity = np.full(kappas.shape, np.sign(form.alpha))
    else:
        # lam = kappa - i xi: a soliton has xi = 0 (exactly, for a real eigenvalue of a real
        # matrix); a conjugate pair is one breather, reported once, with xi > 0.
        solitons = np.abs(lam.imag) <= tol
        pairs = ~solitons & (lam.imag < 0)
        breathers = tuple(
            _breather(z, e, b, form.d)
            for z, e, b in zip(lam[pairs], err[pairs], box[pairs], strict=True)
        )
        kappas, err, box = lam.real[solitons], err[solitons], box[solitons]
        polarity = polarity[solitons]
    shape = SolitonForm(form.kind, form.alpha, form.d)
    amplitudes = polarity * np.asarray(shape.amplitude(kappas))
    return SolitonContent(
        equation=form.kind,
        kappas=kappas,
        amplitudes=amplitudes,
        speeds=np.asarray(shape.speed(kappas)),
        polarity=polarity,
        breathers=breathers,
        resolution_error=err,
        box_error=box.real,
        points=(coarse_m, fine_m),
        tol=float(tol),
        method=method,
    )


def _solve(
    kind: str, w: np.ndarray, length: float, coarse_m: int, fine_m: int
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Eigenvalues (fine, descending ``Re``), resolution errors, box errors and polarities."""
    if kind == "kdv":
        states = _schrodinger_states(_resample(w, coarse_m), length)
        fine_matrix = _schrodinger_matrix(_resample(w, fine_m), length)
    else:
        states = _zs_states(_resample(w, coarse_m), length)
        fine_matrix = _zs_matrix(_resample(w, fine_m), length)
    order = np.argsort(-states.lam.real, kind="stable")
    coarse = states.lam[order]
    starts = _interpolate(states.vectors[:, order], fine_m, 1 if kind == "kdv" else 2)
    if kind == "kdv":  # the Schrödinger eigenvalue is -kappa^2
        energies = [
            _inverse_iteration(fine_matrix, -(c**2), starts[:, i])[0] for i, c in enumerate(coarse)
        ]
        fine = np.sqrt(np.maximum(-np.real(energies), 0.0)).reshape(coarse.shape)
    else:
        refined = [
            _inverse_iteration(fine_matrix, c, starts[:, i])[0] for i, c in enumerate(coarse)
        ]
        fine = np.array(refined, dtype=complex).reshape(coarse.shape)
    err = np.abs(coarse - fine)
    unresolved = ~(err <= UNRESOLVED * np.abs(coarse))
    if np.any(unresolved):
        warnings.warn(
            "bound_states: dropped unresolved state(s) at lam = "
            + ", ".join(f"{complex(v):.6g}" for v in coarse[unresolved])
            + f" (moved by more than {UNRESOLVED:.0%} between {coarse_m} and {fine_m} points); "
            "refine the grid",
            ResolutionWarning,
            stacklevel=3,
        )
    keep = ~unresolved
    return fine[keep], err[keep], states.box[order][keep], states.polarity[order][keep]


def _breather(lam: complex, err: float, box: complex, d: float) -> Breather:
    kappa, xi = float(lam.real), float(-lam.imag)
    envelope, carrier, frequency = breather_speeds(kappa, xi, d)
    return Breather(
        kappa=kappa,
        xi=xi,
        envelope_speed=envelope,
        carrier_speed=carrier,
        resolution_error=float(err),
        box_error=float(np.real(box)),
        frequency=frequency,
    )


def _warn_accuracy(
    kappas: np.ndarray, err: np.ndarray, box: np.ndarray, tol: float, coarse: int, fine: int
) -> None:
    slow = err > tol
    if np.any(slow):
        warnings.warn(
            f"bound_states: kappa = {', '.join(f'{k:.8g}' for k in kappas[slow])} changed by "
            f"up to {err[slow].max():.2g} between {coarse} and {fine} points (tol = {tol:g}); "
            "refine the grid",
            ResolutionWarning,
            stacklevel=3,
        )
    wide = np.abs(box) > tol
    if np.any(wide):
        warnings.warn(
            f"bound_states: kappa = {', '.join(f'{k:.8g}' for k in kappas[wide])} has an estimated "
            f"periodic-box error up to {np.abs(box[wide]).max():.2g} (tol = {tol:g}); "
            "enlarge the domain",
            DomainWarning,
            stacklevel=3,
        )


__all__ = [
    "Breather",
    "DomainWarning",
    "ResolutionWarning",
    "SolitonContent",
    "bound_states",
    "breather_speeds",
]
