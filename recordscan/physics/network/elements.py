"""Circuit elements of the time-domain network solver and their companion models.

Every linear element is a *block* of one to three coupled ports. A port is a branch from
node ``a`` to node ``b`` (``-1`` is ground) with an optional series source voltage
(``emf``); its voltage is ``u = v[a] - v[b] - e(t)`` and its current ``i`` flows from ``a``
to ``b``. With the trapezoidal rule (Dommel, "Digital computer solution of electromagnetic
transients in single- and multiphase networks", IEEE Trans. PAS-88(4), 1969) every block
becomes, at step ``n``::

    i[n] = G·u[n] + h[n],      h[n] = B·u[n-1] + A·i[n-1]

with constant matrices G, B, A:

=========  ==========================  ========  ==================
element    G                           B         A
=========  ==========================  ========  ==================
R (G_r)    G_r                         0         0
series RL  (R + 2L/dt)^-1              G         G·(2L/dt − R)
shunt C    2C/dt                       −G        −I
=========  ==========================  ========  ==================

A transposed line can also be a travelling-wave (Bergeron) segment: lossless propagation of
the three modes of the orthonormal Clarke transformation with the series resistance lumped
as R/4, R/2, R/4 (after H. W. Dommel, "Digital computer solution of electromagnetic
transients in single- and multiphase networks", IEEE Trans. PAS-88(4), 1969; the placement
of the losses from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import ArrayLike

from recordscan.errors import ModelError

__all__ = [
    "CLARKE_T",
    "Block",
    "NetlistBuilder",
    "TravellingWaveSegment",
    "balanced_matrix",
    "block_companion",
    "block_phasor_admittance",
    "is_balanced",
    "modal_parameters",
    "tw_phasor_admittance",
]

#: Orthonormal Clarke (0, alpha, beta) transformation: phase = T · mode, mode = Tᵀ · phase.
CLARKE_T: np.ndarray = np.array(
    [
        [1.0 / math.sqrt(3.0), math.sqrt(2.0 / 3.0), 0.0],
        [1.0 / math.sqrt(3.0), -1.0 / math.sqrt(6.0), 1.0 / math.sqrt(2.0)],
        [1.0 / math.sqrt(3.0), -1.0 / math.sqrt(6.0), -1.0 / math.sqrt(2.0)],
    ]
)


def balanced_matrix(x1: complex | float, x0: complex | float) -> np.ndarray:
    """Phase-domain 3×3 matrix of a transposed element from its sequence values.

    ``self = (x0 + 2·x1)/3`` and ``mutual = (x0 − x1)/3`` (symmetrical components,
    Fortescue 1918). Works for impedances, inductances and capacitances alike.

    Parameters
    ----------
    x1, x0 : complex or float
        Positive- and zero-sequence values.

    Returns
    -------
    numpy.ndarray
        (3, 3) matrix, complex if either input is complex.
    """
    s = (x0 + 2.0 * x1) / 3.0
    m = (x0 - x1) / 3.0
    dtype = complex if isinstance(x1, complex) or isinstance(x0, complex) else float
    out = np.full((3, 3), m, dtype=dtype)
    np.fill_diagonal(out, s)
    return out


def is_balanced(mat: np.ndarray, *, rtol: float = 1e-6) -> bool:
    """Whether a 3×3 matrix has equal diagonal and equal off-diagonal entries."""
    scale = float(np.max(np.abs(mat))) or 1.0
    d = np.diag(mat)
    off = mat[~np.eye(3, dtype=bool)]
    return bool(np.ptp(d) <= rtol * scale and np.ptp(off) <= rtol * scale)


@dataclass(frozen=True)
class Block:
    """One to three coupled ports of a linear element.

    Attributes
    ----------
    kind : str
        ``"r"`` (conductance matrix), ``"rl"`` (series R–L) or ``"c"`` (capacitance).
    a, b : numpy.ndarray
        Node indices of the port ends (``-1`` = ground).
    r_ohm, l_h, c_f, g_siemens : numpy.ndarray
        Element matrices (only those of the kind are used).
    emf_v : numpy.ndarray
        Complex peak phasor of a series source voltage per port (0 = none).
    label : str
        What the block is (for debugging and for finding breaker ports).
    """

    kind: str
    a: np.ndarray
    b: np.ndarray
    r_ohm: np.ndarray
    l_h: np.ndarray
    c_f: np.ndarray
    g_siemens: np.ndarray
    emf_v: np.ndarray
    label: str = ""

    @property
    def size(self) -> int:
        """Number of ports."""
        return int(self.a.size)


def block_companion(block: Block, dt_s: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Trapezoidal companion matrices (G, B, A) of a block (see the module docstring)."""
    s = block.size
    if block.kind == "r":
        g = np.array(block.g_siemens, dtype=float)
        return g, np.zeros((s, s)), np.zeros((s, s))
    if block.kind == "rl":
        k = 2.0 * block.l_h / dt_s
        g = np.linalg.inv(block.r_ohm + k)
        return g, g.copy(), g @ (k - block.r_ohm)
    if block.kind == "c":
        g = 2.0 * block.c_f / dt_s
        return g, -g, -np.eye(s)
    raise ModelError(f"unknown element kind {block.kind!r}")


def block_phasor_admittance(block: Block, omega_rad_s: float) -> np.ndarray:
    """Complex admittance matrix of a block at angular frequency ``omega_rad_s``."""
    if block.kind == "r":
        return np.asarray(block.g_siemens, dtype=complex)
    if block.kind == "rl":
        return np.linalg.inv(block.r_ohm + 1j * omega_rad_s * block.l_h)
    return 1j * omega_rad_s * np.asarray(block.c_f, dtype=complex)


def modal_parameters(
    r_ohm_per_m: np.ndarray, l_h_per_m: np.ndarray, c_f_per_m: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Modal (0, alpha, beta) per-length R, L, C of a transposed line (Clarke transform).

    Raises
    ------
    ModelError
        If a matrix is not balanced (the line is not transposed).
    """
    for name, mat in (("R", r_ohm_per_m), ("L", l_h_per_m), ("C", c_f_per_m)):
        if not is_balanced(np.asarray(mat)):
            raise ModelError(
                f"travelling-wave line model needs a transposed line, but the {name} matrix "
                "is not balanced; use line_model='pi' for untransposed lines"
            )
    t = CLARKE_T
    return (
        np.diag(t.T @ r_ohm_per_m @ t).copy(),
        np.diag(t.T @ l_h_per_m @ t).copy(),
        np.diag(t.T @ c_f_per_m @ t).copy(),
    )


@dataclass(frozen=True)
class TravellingWaveSegment:
    """A transposed line segment as three Bergeron modes with lumped losses.

    Attributes
    ----------
    k, m : numpy.ndarray
        Node indices (3 phases) of the two ends.
    z_surge_ohm : numpy.ndarray
        Lossless surge impedance per mode, sqrt(L/C).
    r_total_ohm : numpy.ndarray
        Series resistance of the whole segment per mode.
    tau_s : numpy.ndarray
        Travel time per mode, length·sqrt(L·C).
    """

    k: np.ndarray
    m: np.ndarray
    z_surge_ohm: np.ndarray
    r_total_ohm: np.ndarray
    tau_s: np.ndarray

    @property
    def z_prime_ohm(self) -> np.ndarray:
        """Input resistance of the companion, Z + R/4."""
        return self.z_surge_ohm + self.r_total_ohm / 4.0

    @property
    def h(self) -> np.ndarray:
        """Loss factor (Z − R/4)/(Z + R/4)."""
        return (self.z_surge_ohm - self.r_total_ohm / 4.0) / self.z_prime_ohm

    @property
    def g_phase_siemens(self) -> np.ndarray:
        """Phase-domain conductance seen at either end, T·diag(1/Z')·Tᵀ."""
        return CLARKE_T @ np.diag(1.0 / self.z_prime_ohm) @ CLARKE_T.T


def tw_phasor_admittance(seg: TravellingWaveSegment, omega_rad_s: float) -> np.ndarray:
    """Two-port phasor admittance (6×6, phase domain) of the lumped-loss Bergeron model.

    The model is R/4 – lossless half – R/2 – lossless half – R/4 per mode; chaining the
    ABCD matrices gives its exact sinusoidal steady state (used to start a simulation
    without a spurious transient).
    """
    y_modal = np.zeros((2, 2, 3), dtype=complex)
    for mode in range(3):
        z = seg.z_surge_ohm[mode]
        r = seg.r_total_ohm[mode]
        beta_l = omega_rad_s * seg.tau_s[mode] / 2.0
        half = np.array(
            [[math.cos(beta_l), 1j * z * math.sin(beta_l)], [1j * math.sin(beta_l) / z, 0]],
            dtype=complex,
        )
        half[1, 1] = math.cos(beta_l)

        def ser(x: float) -> np.ndarray:
            return np.array([[1.0, x], [0.0, 1.0]], dtype=complex)

        abcd = ser(r / 4) @ half @ ser(r / 2) @ half @ ser(r / 4)
        a_, b_, _c, d_ = abcd[0, 0], abcd[0, 1], abcd[1, 0], abcd[1, 1]
        y_modal[0, 0, mode] = d_ / b_
        y_modal[0, 1, mode] = -1.0 / b_
        y_modal[1, 0, mode] = -1.0 / b_
        y_modal[1, 1, mode] = a_ / b_
    t = CLARKE_T
    out = np.zeros((6, 6), dtype=complex)
    for p in range(2):
        for q in range(2):
            out[3 * p : 3 * p + 3, 3 * q : 3 * q + 3] = t @ np.diag(y_modal[p, q]) @ t.T
    return out


@dataclass
class NetlistBuilder:
    """Collects nodes, blocks and travelling-wave segments while a network is described."""

    n_nodes: int = 0
    blocks: list[Block] = field(default_factory=list)
    segments: list[TravellingWaveSegment] = field(default_factory=list)

    def add_nodes(self, count: int) -> np.ndarray:
        """Allocate ``count`` new nodes and return their indices."""
        idx = np.arange(self.n_nodes, self.n_nodes + count)
        self.n_nodes += count
        return idx

    def _add(
        self,
        kind: str,
        a: ArrayLike,
        b: ArrayLike,
        *,
        r: ArrayLike | None = None,
        ind: ArrayLike | None = None,
        c: ArrayLike | None = None,
        g: ArrayLike | None = None,
        emf: ArrayLike | None = None,
        label: str = "",
    ) -> int:
        a = np.atleast_1d(np.asarray(a, dtype=np.int64))
        b = np.atleast_1d(np.asarray(b, dtype=np.int64))
        s = a.size
        if b.size != s or s > 3:
            raise ModelError(f"block {label!r}: node lists of unequal length or above 3")
        z = np.zeros((s, s))

        def mat(x: ArrayLike | None) -> np.ndarray:
            return z.copy() if x is None else np.atleast_2d(np.asarray(x, dtype=float))

        e = np.zeros(s, dtype=complex) if emf is None else np.asarray(emf, dtype=complex)
        self.blocks.append(Block(kind, a, b, mat(r), mat(ind), mat(c), mat(g), e, label))
        return len(self.blocks) - 1

    def add_rl(
        self,
        a: ArrayLike,
        b: ArrayLike,
        r_ohm: ArrayLike,
        l_h: ArrayLike,
        *,
        emf_v: ArrayLike | None = None,
        label: str = "",
    ) -> int:
        """Add a (coupled) series R–L block; returns its index."""
        return self._add("rl", a, b, r=r_ohm, ind=l_h, emf=emf_v, label=label)

    def add_c(self, a: ArrayLike, b: ArrayLike, c_f: ArrayLike, *, label: str = "") -> int:
        """Add a (coupled) capacitance block; returns its index."""
        return self._add("c", a, b, c=c_f, label=label)

    def add_g(
        self,
        a: ArrayLike,
        b: ArrayLike,
        g_siemens: ArrayLike,
        *,
        emf_v: ArrayLike | None = None,
        label: str = "",
    ) -> int:
        """Add a (coupled) conductance block; returns its index."""
        return self._add("r", a, b, g=g_siemens, emf=emf_v, label=label)

    def add_segment(self, seg: TravellingWaveSegment) -> None:
        """Add a travelling-wave segment."""
        self.segments.append(seg)
