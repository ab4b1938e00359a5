"""Nodal solution of a network of companion blocks: assembly, phasor start, the run loop.

The nodal matrix Y = Σ Mᵀ·G·M (+ travelling-wave end conductances) is constant between
switching events. It is inverted once per switching state (the network has a few dozen
nodes, so the dense inverse costs microseconds and one matrix–vector product per step
is the whole linear solution); breaker poles, which are the only elements that change
it, trigger a new inverse. The fault arcs never enter Y: they are added each step by the
compensation method (see :mod:`recordscan.physics.network.kernel`).

A run starts from the sinusoidal steady state of the initial switching state, computed
with the complex admittances of the same elements, so that no start-up transient
pollutes a simulated record.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from recordscan.errors import ModelError
from recordscan.physics.network.elements import (
    CLARKE_T,
    NetlistBuilder,
    block_companion,
    block_phasor_admittance,
    tw_phasor_admittance,
)

__all__ = [
    "CompiledNetwork",
    "compile_network",
    "initial_state",
    "nodal_matrix",
    "phasor_solution",
]

#: Conductance of a closed breaker pole [S] (0.1 mΩ: negligible against any line or source).
G_CLOSED_SIEMENS = 1.0e4


@dataclass
class CompiledNetwork:
    """Flat arrays of a network for the compiled kernel (built by :func:`compile_network`).

    Breaker poles are conductance blocks listed in ``breaker_blocks`` (pole index
    ``end·3 + phase``); their conductance is set from the pole states before each
    refactorisation.
    """

    builder: NetlistBuilder
    dt_s: float
    omega_rad_s: float
    port_a: np.ndarray
    port_b: np.ndarray
    emf: np.ndarray
    blk_off: np.ndarray
    blk_size: np.ndarray
    blk_g: np.ndarray
    blk_b: np.ndarray
    blk_a: np.ndarray
    breaker_blocks: np.ndarray
    bus_nodes: np.ndarray
    tw_k: np.ndarray
    tw_m: np.ndarray
    tw_zp: np.ndarray
    tw_h: np.ndarray
    tw_q: np.ndarray
    tw_frac: np.ndarray
    nbuf: int
    brk_k: np.ndarray = field(init=False)

    def __post_init__(self) -> None:
        n_ports = self.port_a.size
        self.brk_k = np.zeros((6, n_ports))
        for pole, bi in enumerate(self.breaker_blocks):
            bus = self.bus_nodes[pole]
            own = self.blk_off[bi]
            for p in range(n_ports):
                if p == own:
                    continue
                if self.port_a[p] == bus:
                    self.brk_k[pole, p] -= 1.0
                if self.port_b[p] == bus:
                    self.brk_k[pole, p] += 1.0

    @property
    def n_nodes(self) -> int:
        """Number of nodes."""
        return self.builder.n_nodes

    def set_poles(self, pole_closed: np.ndarray) -> None:
        """Write the breaker conductances for the given pole states (1 closed, 0 open)."""
        for pole, bi in enumerate(self.breaker_blocks):
            self.blk_g[bi, 0, 0] = G_CLOSED_SIEMENS if pole_closed[pole] else 0.0


def compile_network(
    builder: NetlistBuilder,
    *,
    dt_s: float,
    frequency_hz: float,
    breaker_blocks: np.ndarray,
    bus_nodes: np.ndarray,
) -> CompiledNetwork:
    """Turn a described network into the flat arrays the kernel needs."""
    blocks = builder.blocks
    sizes = np.array([b.size for b in blocks], dtype=np.int64)
    offs = np.concatenate([[0], np.cumsum(sizes)[:-1]]).astype(np.int64)
    n_ports = int(sizes.sum())
    port_a = np.concatenate([b.a for b in blocks]).astype(np.int64)
    port_b = np.concatenate([b.b for b in blocks]).astype(np.int64)
    emf = np.concatenate([b.emf_v for b in blocks]).astype(complex)
    nb = len(blocks)
    g = np.zeros((nb, 3, 3))
    bb = np.zeros((nb, 3, 3))
    aa = np.zeros((nb, 3, 3))
    for i, blk in enumerate(blocks):
        gi, bi, ai = block_companion(blk, dt_s)
        s = blk.size
        g[i, :s, :s] = gi
        bb[i, :s, :s] = bi
        aa[i, :s, :s] = ai
    segs = builder.segments
    ns = len(segs)
    tw_k = np.zeros((ns, 3), dtype=np.int64)
    tw_m = np.zeros((ns, 3), dtype=np.int64)
    tw_zp = np.ones((ns, 3))
    tw_h = np.ones((ns, 3))
    tw_q = np.ones((ns, 3), dtype=np.int64)
    tw_frac = np.zeros((ns, 3))
    nbuf = 2
    for s, seg in enumerate(segs):
        steps = seg.tau_s / dt_s
        if np.any(steps < 1.0):
            raise ModelError(
                "travelling-wave segment shorter than one time step of travel; "
                "use a pi section for it or a smaller dt_s"
            )
        tw_k[s] = seg.k
        tw_m[s] = seg.m
        tw_zp[s] = seg.z_prime_ohm
        tw_h[s] = seg.h
        tw_q[s] = np.floor(steps).astype(np.int64)
        tw_frac[s] = steps - np.floor(steps)
        nbuf = max(nbuf, int(np.max(tw_q[s])) + 3)
    if n_ports == 0:
        raise ModelError("network has no elements")
    return CompiledNetwork(
        builder=builder,
        dt_s=dt_s,
        omega_rad_s=2.0 * np.pi * frequency_hz,
        port_a=port_a,
        port_b=port_b,
        emf=emf,
        blk_off=offs,
        blk_size=sizes,
        blk_g=g,
        blk_b=bb,
        blk_a=aa,
        breaker_blocks=np.asarray(breaker_blocks, dtype=np.int64),
        bus_nodes=np.asarray(bus_nodes, dtype=np.int64),
        tw_k=tw_k,
        tw_m=tw_m,
        tw_zp=tw_zp,
        tw_h=tw_h,
        tw_q=tw_q,
        tw_frac=tw_frac,
        nbuf=nbuf,
    )


def _stamp(y: np.ndarray, a: np.ndarray, b: np.ndarray, g: np.ndarray) -> None:
    s = a.size
    for r in range(s):
        for q in range(s):
            val = g[r, q]
            if val == 0:
                continue
            if a[r] >= 0 and a[q] >= 0:
                y[a[r], a[q]] += val
            if a[r] >= 0 and b[q] >= 0:
                y[a[r], b[q]] -= val
            if b[r] >= 0 and a[q] >= 0:
                y[b[r], a[q]] -= val
            if b[r] >= 0 and b[q] >= 0:
                y[b[r], b[q]] += val


def nodal_matrix(net: CompiledNetwork) -> np.ndarray:
    """Real nodal conductance matrix of the companion network (current pole states)."""
    n = net.n_nodes
    y = np.zeros((n, n))
    for i, blk in enumerate(net.builder.blocks):
        s = blk.size
        _stamp(y, blk.a, blk.b, net.blk_g[i, :s, :s])
    for seg in net.builder.segments:
        gp = seg.g_phase_siemens
        y[np.ix_(seg.k, seg.k)] += gp
        y[np.ix_(seg.m, seg.m)] += gp
    return y


def phasor_solution(
    net: CompiledNetwork,
    *,
    pole_closed: np.ndarray,
    shunt_g: dict[int, float] | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Sinusoidal steady state (complex peak phasors) of the network.

    Parameters
    ----------
    net
        The compiled network.
    pole_closed
        Breaker pole states (6,).
    shunt_g
        Extra conductances from nodes to ground {node: siemens} (e.g. a bolted fault).

    Returns
    -------
    v_node : numpy.ndarray
        Node voltage phasors (n_nodes,).
    i_port : numpy.ndarray
        Port current phasors (n_ports,), flowing from a to b.
    """
    n = net.n_nodes
    w = net.omega_rad_s
    y = np.zeros((n, n), dtype=complex)
    inj = np.zeros(n, dtype=complex)
    yblocks = []
    pole_of_block = {int(bi): pole for pole, bi in enumerate(net.breaker_blocks)}
    for i, blk in enumerate(net.builder.blocks):
        yb = block_phasor_admittance(blk, w)
        if i in pole_of_block:
            closed = bool(pole_closed[pole_of_block[i]])
            yb = np.array([[G_CLOSED_SIEMENS if closed else 0.0]], dtype=complex)
        yblocks.append(yb)
        _stamp(y, blk.a, blk.b, yb)
        known = yb @ (-blk.emf_v)
        for r in range(blk.size):
            if blk.a[r] >= 0:
                inj[blk.a[r]] -= known[r]
            if blk.b[r] >= 0:
                inj[blk.b[r]] += known[r]
    for seg in net.builder.segments:
        y2 = tw_phasor_admittance(seg, w)
        idx = np.concatenate([seg.k, seg.m])
        y[np.ix_(idx, idx)] += y2
    for node, g in (shunt_g or {}).items():
        y[node, node] += g
    v = np.linalg.solve(y, inj)
    i_port = np.zeros(net.port_a.size, dtype=complex)
    for i, blk in enumerate(net.builder.blocks):
        va = np.where(blk.a >= 0, v[np.maximum(blk.a, 0)], 0.0)
        vb = np.where(blk.b >= 0, v[np.maximum(blk.b, 0)], 0.0)
        off = net.blk_off[i]
        i_port[off : off + blk.size] = yblocks[i] @ (va - vb - blk.emf_v)
    return v, i_port


def initial_state(
    net: CompiledNetwork,
    *,
    pole_closed: np.ndarray,
    shunt_g: dict[int, float] | None = None,
) -> dict[str, np.ndarray]:
    """Port and travelling-wave histories of the steady state just before t = 0."""
    v, ip = phasor_solution(net, pole_closed=pole_closed, shunt_g=shunt_g)
    w = net.omega_rad_s
    dt = net.dt_s
    rot = np.exp(-1j * w * dt)
    va = np.where(net.port_a >= 0, v[np.maximum(net.port_a, 0)], 0.0)
    vb = np.where(net.port_b >= 0, v[np.maximum(net.port_b, 0)], 0.0)
    u_ph = va - vb - net.emf
    state = {
        "u_prev": np.real(u_ph * rot).copy(),
        "i_prev": np.real(ip * rot).copy(),
        "brk_i_prev": np.real((net.brk_k @ ip) * rot).copy(),
    }
    ns = len(net.builder.segments)
    nb = net.nbuf
    bufs = {key: np.zeros((ns, 3, nb)) for key in ("tw_vk", "tw_vm", "tw_ik", "tw_im")}
    steps = np.arange(-nb + 1, 0)
    slots = steps % nb
    phase = np.exp(1j * w * dt * steps)
    for s, seg in enumerate(net.builder.segments):
        y2 = tw_phasor_admittance(seg, w)
        vk, vm = v[seg.k], v[seg.m]
        ik = y2[:3, :3] @ vk + y2[:3, 3:] @ vm
        im = y2[3:, :3] @ vk + y2[3:, 3:] @ vm
        for key, val in (("tw_vk", vk), ("tw_vm", vm), ("tw_ik", ik), ("tw_im", im)):
            modal = CLARKE_T.T @ val
            bufs[key][s][:, slots] = np.real(modal[:, None] * phase[None, :])
    state.update(bufs)
    return state
