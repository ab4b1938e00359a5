"""The compiled inner loop of the time-domain network solver.

One call advances the network from step ``n_start`` until the end or until a breaker pole
changes state (the caller then refactorises the nodal matrix and calls again). Within a
call the nodal matrix is constant: its inverse ``yinv`` is applied once per step to the
history injections, and the fault arcs (time-varying conductances from fault nodes to
ground) are added by the compensation method — a k×k correction with the Thevenin
impedances of the fault nodes (Dommel, "Nonlinear and time-varying elements in digital
simulation of electromagnetic transients", IEEE Trans. PAS-90(6), 1971).

The arc model is :mod:`recordscan.physics.arc`, whose scalar functions are compiled here
with :func:`numba.njit`. The same Python source runs uncompiled as ``run_kernel.py_func``
(used by the benchmark to measure what compilation buys).

After an extinction the recovery voltage at the fault node races the path's withstand
(:func:`recordscan.physics.arc.dielectric_strength_scalar`, evaluated at the recovery time
less any plateau and multiplied by a scatter factor redrawn every half cycle). A
breakdown less than a quarter cycle after the current zero is a re-ignition (the arc goes
on in its channel), a later one a restrike (a new arc over l0), after IEC 60050-441.

Event log rows are ``(kind, t_s, index, extra)`` with kinds listed in :data:`LOG_KINDS`.
"""

from __future__ import annotations

import hashlib
import math
from pathlib import Path

import numba
import numpy as np

from recordscan.physics import arc as _arc

__all__ = ["LOG_KINDS", "run_kernel"]

#: Event-log kinds written by the kernel.
LOG_KINDS: dict[int, str] = {
    1: "pole_open",
    2: "pole_close",
    3: "extinction",
    4: "restrike",
    5: "secondary_start",
    6: "three_pole_trip",
    7: "inception",
    8: "reestablished",
    9: "reignition",
}

_jit = numba.njit(cache=True, nogil=True)
_arc_step = _jit(_arc.arc_step_scalar)
_extinct = _jit(_arc.extinction_scalar)
_elong = _jit(_arc.elongation_length_scalar)
_hot = _jit(_arc.hot_channel_strength_scalar)
_strength = _jit(_arc.dielectric_strength_scalar)

# arc state columns
S_G, S_BURN, S_STARTED, S_L, S_TEL, S_TEXT, S_TBS, S_S2, S_CNT = 0, 1, 2, 3, 4, 5, 6, 7, 8
S_TE, S_IRMS, S_LEXT, S_SEC, S_REEST, S_MODE = 9, 10, 11, 12, 13, 14
S_IPREV, S_TZERO = 15, 16
S_TSEC, S_RNG, S_SCAT, S_VSIGN, S_NRS = 17, 18, 19, 20, 21
N_ARC_STATE = 22
# arc configuration columns
C_NODE, C_PHASE, C_RF, C_PERM, C_RESTRIKE, C_T0, C_CODE, C_P1, C_P2 = 0, 1, 2, 3, 4, 5, 6, 7, 8
C_CEIL, C_RATE = 9, 10
C_TSAT, C_SCATTER, C_SEED, C_MAXRS, C_TPLAT = 11, 12, 13, 14, 15
N_ARC_CONF = 16

# Park–Miller "minimal standard" generator (Park & Miller, Comm. ACM 31(10), 1988):
# x ← 16807·x mod (2^31 − 1); every product stays below 2^53, so float64 arithmetic is exact.
_PM_A = 16807.0
_PM_M = 2147483647.0


@_jit
def _log(log: np.ndarray, log_n: np.ndarray, kind: int, t: float, idx: int, extra: float) -> None:
    k = log_n[0]
    if k < log.shape[0]:
        log[k, 0] = kind
        log[k, 1] = t
        log[k, 2] = idx
        log[k, 3] = extra
        log_n[0] = k + 1


@_jit
def _uniform(state: np.ndarray, k: int) -> float:
    """Next uniform number in (0, 1) of arc ``k``'s Park–Miller generator."""
    x = (_PM_A * state[k, S_RNG]) % _PM_M
    state[k, S_RNG] = x
    return x / _PM_M


@_jit
def _new_scatter(state: np.ndarray, conf: np.ndarray, k: int) -> None:
    """Draw the breakdown factor ``1 + σ·z`` (z standard normal, Box–Muller; |z| ≤ 3)."""
    sigma = conf[k, C_SCATTER]
    if sigma <= 0.0:
        state[k, S_SCAT] = 1.0
        return
    u1 = _uniform(state, k)
    u2 = _uniform(state, k)
    z = math.sqrt(-2.0 * math.log(u1)) * math.cos(2.0 * math.pi * u2)
    z = min(max(z, -3.0), 3.0)
    state[k, S_SCAT] = 1.0 + sigma * z


@_jit
def _solve_small(a: np.ndarray, b: np.ndarray, k: int) -> None:
    """Solve a·x = b in place (x into b) for k ≤ 3, Gaussian elimination with pivoting."""
    for col in range(k):
        piv = col
        for r in range(col + 1, k):
            if abs(a[r, col]) > abs(a[piv, col]):
                piv = r
        if piv != col:
            for c in range(k):
                tmp = a[col, c]
                a[col, c] = a[piv, c]
                a[piv, c] = tmp
            tmp = b[col]
            b[col] = b[piv]
            b[piv] = tmp
        for r in range(col + 1, k):
            f = a[r, col] / a[col, col]
            for c in range(col, k):
                a[r, c] -= f * a[col, c]
            b[r] -= f * b[col]
    for col in range(k - 1, -1, -1):
        s = b[col]
        for c in range(col + 1, k):
            s -= a[col, c] * b[c]
        b[col] = s / a[col, col]


@_jit
def run_kernel(
    n_start: int,
    n_total: int,
    dt: float,
    omega: float,
    yinv: np.ndarray,
    port_a: np.ndarray,
    port_b: np.ndarray,
    emf_re: np.ndarray,
    emf_im: np.ndarray,
    blk_off: np.ndarray,
    blk_size: np.ndarray,
    blk_g: np.ndarray,
    blk_b: np.ndarray,
    blk_a: np.ndarray,
    u_prev: np.ndarray,
    i_prev: np.ndarray,
    tw_k: np.ndarray,
    tw_m: np.ndarray,
    tw_zp: np.ndarray,
    tw_h: np.ndarray,
    tw_q: np.ndarray,
    tw_frac: np.ndarray,
    tw_vk: np.ndarray,
    tw_vm: np.ndarray,
    tw_ik: np.ndarray,
    tw_im: np.ndarray,
    clarke: np.ndarray,
    brk_k: np.ndarray,
    pole_closed: np.ndarray,
    trip_t: np.ndarray,
    close_t: np.ndarray,
    brk_i_prev: np.ndarray,
    tpt_delay: np.ndarray,
    rec_line: np.ndarray,
    rec_bus: np.ndarray,
    neu_ports: np.ndarray,
    out_vline: np.ndarray,
    out_vbus: np.ndarray,
    out_iline: np.ndarray,
    out_ineu: np.ndarray,
    out_pole: np.ndarray,
    arc_conf: np.ndarray,
    arc_par: np.ndarray,
    arc_state: np.ndarray,
    out_arc_i: np.ndarray,
    out_arc_v: np.ndarray,
    out_arc_g: np.ndarray,
    out_arc_l: np.ndarray,
    log: np.ndarray,
    log_n: np.ndarray,
) -> int:
    """Advance the network; return the step at which the caller must refactorise.

    Returns ``n_total`` when the run is complete. All state arrays are updated in place.
    """
    n_nodes = yinv.shape[0]
    n_ports = port_a.shape[0]
    n_blk = blk_off.shape[0]
    n_seg = tw_k.shape[0]
    n_arc = arc_conf.shape[0]
    nbuf = tw_vk.shape[2] if n_seg > 0 else 1
    e_t = np.zeros(n_ports)
    hist = np.zeros(n_ports)
    inj = np.zeros(n_nodes)
    v = np.zeros(n_nodes)
    i_port = np.zeros(n_ports)
    ibrk = np.zeros(6)
    z_th = np.zeros((3, 3))
    rhs = np.zeros(3)
    g_b = np.zeros(3)
    i_arc = np.zeros(3)
    hk = np.zeros(3)
    hm = np.zeros(3)
    a_m = np.zeros((3, 3))
    tw_hist = np.zeros((max(n_seg, 1), 2, 3))
    tmp3 = np.zeros(3)
    arc_nodes = np.zeros(max(n_arc, 1), dtype=np.int64)
    for k in range(n_arc):
        arc_nodes[k] = int(arc_conf[k, C_NODE])
    for r in range(n_arc):
        for c in range(n_arc):
            z_th[r, c] = yinv[arc_nodes[r], arc_nodes[c]]
    for k in range(n_arc):
        if arc_state[k, S_RNG] == 0.0:
            arc_state[k, S_RNG] = 1.0 + (arc_conf[k, C_SEED] + 7919.0 * k) % (_PM_M - 1.0)

    for n in range(n_start, n_total):
        t = n * dt
        cw = math.cos(omega * t)
        sw = math.sin(omega * t)
        for p in range(n_ports):
            e_t[p] = emf_re[p] * cw - emf_im[p] * sw
        inj[:] = 0.0
        # history of the companion blocks; the known part of each port current
        for bi in range(n_blk):
            off = blk_off[bi]
            sz = blk_size[bi]
            for r in range(sz):
                h = 0.0
                known = 0.0
                for q in range(sz):
                    h += blk_b[bi, r, q] * u_prev[off + q] + blk_a[bi, r, q] * i_prev[off + q]
                    known -= blk_g[bi, r, q] * e_t[off + q]
                p = off + r
                hist[p] = h
                known += h
                if port_a[p] >= 0:
                    inj[port_a[p]] -= known
                if port_b[p] >= 0:
                    inj[port_b[p]] += known
        # travelling-wave history sources (modal domain, interpolated at t - tau)
        for s in range(n_seg):
            for md in range(3):
                q = tw_q[s, md]
                fr = tw_frac[s, md]
                j0 = (n - q) % nbuf
                j1 = (n - q - 1) % nbuf
                vk_d = tw_vk[s, md, j0] * (1.0 - fr) + tw_vk[s, md, j1] * fr
                vm_d = tw_vm[s, md, j0] * (1.0 - fr) + tw_vm[s, md, j1] * fr
                ik_d = tw_ik[s, md, j0] * (1.0 - fr) + tw_ik[s, md, j1] * fr
                im_d = tw_im[s, md, j0] * (1.0 - fr) + tw_im[s, md, j1] * fr
                zp = tw_zp[s, md]
                hh = tw_h[s, md]
                a1 = 0.5 * (1.0 + hh)
                a2 = 0.5 * (1.0 - hh)
                hk[md] = -a1 * (vm_d / zp + hh * im_d) - a2 * (vk_d / zp + hh * ik_d)
                hm[md] = -a1 * (vk_d / zp + hh * ik_d) - a2 * (vm_d / zp + hh * im_d)
                tw_hist[s, 0, md] = hk[md]
                tw_hist[s, 1, md] = hm[md]
            for ph in range(3):
                sk = 0.0
                sm = 0.0
                for md in range(3):
                    sk += clarke[ph, md] * hk[md]
                    sm += clarke[ph, md] * hm[md]
                inj[tw_k[s, ph]] -= sk
                inj[tw_m[s, ph]] -= sm
        # open-circuit solution
        for r in range(n_nodes):
            acc = 0.0
            for c in range(n_nodes):
                acc += yinv[r, c] * inj[c]
            v[r] = acc
        # fault arcs: start, branch conductance, compensation
        n_live = 0
        for k in range(n_arc):
            if arc_state[k, S_STARTED] == 0.0 and t >= arc_conf[k, C_T0]:
                arc_state[k, S_STARTED] = 1.0
                arc_state[k, S_BURN] = 1.0
                arc_state[k, S_L] = arc_par[k, 0, 4]
                arc_state[k, S_G] = 100.0 / (arc_par[k, 0, 0] * arc_par[k, 0, 4])
                arc_state[k, S_MODE] = 1.0
                _log(log, log_n, 7, t, k, 0.0)
                ph0 = int(arc_conf[k, C_PHASE])
                if pole_closed[ph0] + pole_closed[3 + ph0] == 0:
                    arc_state[k, S_MODE] = 2.0
                    arc_state[k, S_SEC] = 1.0
                    arc_state[k, S_TEL] = t
                    arc_state[k, S_TBS] = t
                    arc_state[k, S_TSEC] = t
                    _log(log, log_n, 5, t, k, 0.0)
            g_b[k] = 0.0
            if arc_state[k, S_BURN] == 1.0:
                rf = arc_conf[k, C_RF]
                if arc_conf[k, C_PERM] == 1.0:
                    g_b[k] = 1.0 / rf
                else:
                    g = arc_state[k, S_G]
                    g_b[k] = g / (1.0 + g * rf)
                if g_b[k] > 0.0:
                    n_live += 1
        if n_live > 0:
            for r in range(n_arc):
                rhs[r] = g_b[r] * v[arc_nodes[r]]
                for c in range(n_arc):
                    a_m[r, c] = g_b[r] * z_th[r, c]
                a_m[r, r] += 1.0
            _solve_small(a_m, rhs, n_arc)
            for k in range(n_arc):
                i_arc[k] = rhs[k]
            for r in range(n_nodes):
                acc = 0.0
                for k in range(n_arc):
                    acc += yinv[r, arc_nodes[k]] * i_arc[k]
                v[r] -= acc
        else:
            for k in range(n_arc):
                i_arc[k] = 0.0
        # port voltages and currents
        for bi in range(n_blk):
            off = blk_off[bi]
            sz = blk_size[bi]
            for r in range(sz):
                p = off + r
                uu = -e_t[p]
                if port_a[p] >= 0:
                    uu += v[port_a[p]]
                if port_b[p] >= 0:
                    uu -= v[port_b[p]]
                tmp3[r] = uu
            for r in range(sz):
                acc = hist[off + r]
                for q in range(sz):
                    acc += blk_g[bi, r, q] * tmp3[q]
                i_port[off + r] = acc
                u_prev[off + r] = tmp3[r]
        for p in range(n_ports):
            i_prev[p] = i_port[p]
        # travelling-wave buffers: modal end voltages and currents of this step
        jn = n % nbuf
        for s in range(n_seg):
            for md in range(3):
                vkm = 0.0
                vmm = 0.0
                for ph in range(3):
                    vkm += clarke[ph, md] * v[tw_k[s, ph]]
                    vmm += clarke[ph, md] * v[tw_m[s, ph]]
                zp = tw_zp[s, md]
                tw_vk[s, md, jn] = vkm
                tw_vm[s, md, jn] = vmm
                tw_ik[s, md, jn] = vkm / zp + tw_hist[s, 0, md]
                tw_im[s, md, jn] = vmm / zp + tw_hist[s, 1, md]
        # breaker currents (bus → line) by Kirchhoff's current law at the bus
        for pole in range(6):
            acc = 0.0
            for p in range(n_ports):
                acc += brk_k[pole, p] * i_port[p]
            ibrk[pole] = acc if pole_closed[pole] == 1 else 0.0
        # outputs
        for j in range(6):
            out_vline[j, n] = v[rec_line[j]]
            out_vbus[j, n] = v[rec_bus[j]]
            out_iline[j, n] = ibrk[j]
            out_pole[j, n] = pole_closed[j]
        for e in range(2):
            acc = 0.0
            for j in range(3):
                if neu_ports[e, j] >= 0:
                    acc += i_port[neu_ports[e, j]]
            out_ineu[e, n] = acc
        # arc dynamics for the next step
        for k in range(n_arc):
            vf = v[arc_nodes[k]]
            ph = int(arc_conf[k, C_PHASE])
            connected = pole_closed[ph] + pole_closed[3 + ph] > 0
            pset = 0 if connected else 1
            out_arc_i[k, n] = i_arc[k]
            out_arc_l[k, n] = arc_state[k, S_L]
            if arc_state[k, S_BURN] == 1.0:
                if arc_conf[k, C_PERM] == 1.0:
                    out_arc_g[k, n] = 1.0 / arc_conf[k, C_RF]
                    out_arc_v[k, n] = vf
                    if connected and arc_state[k, S_SEC] == 1.0 and arc_state[k, S_REEST] == 0:
                        arc_state[k, S_REEST] = 1.0
                        _log(log, log_n, 8, t, k, 0.0)
                        for pole in range(6):
                            tt = t + tpt_delay[pole // 3]
                            trip_t[pole] = min(trip_t[pole], tt)
                            close_t[pole] = np.inf
                        _log(log, log_n, 6, t + tpt_delay[0], 0, t + tpt_delay[1])
                    continue
                g = arc_state[k, S_G]
                out_arc_g[k, n] = g
                out_arc_v[k, n] = vf - i_arc[k] * arc_conf[k, C_RF]
                ipv = arc_state[k, S_IPREV]
                if ipv * i_arc[k] <= 0.0 and ipv != i_arc[k]:
                    arc_state[k, S_TZERO] = t - dt + dt * ipv / (ipv - i_arc[k])
                arc_state[k, S_IPREV] = i_arc[k]
                if pset == 1:
                    l_m = _elong(
                        int(arc_conf[k, C_CODE]),
                        arc_conf[k, C_P1],
                        arc_conf[k, C_P2],
                        t + dt - arc_state[k, S_TEL],
                        arc_par[k, 1, 4],
                    )
                else:
                    l_m = arc_par[k, 0, 4]
                g_new = _arc_step(
                    g,
                    i_arc[k],
                    arc_state[k, S_L],
                    dt,
                    arc_par[k, pset, 0],
                    arc_par[k, pset, 1],
                    arc_par[k, pset, 2],
                    arc_par[k, pset, 3],
                    arc_par[k, pset, 4],
                )
                extinct = False
                if pset == 1:
                    arc_state[k, S_S2] += i_arc[k] * i_arc[k]
                    arc_state[k, S_CNT] += 1.0
                    extinct = _extinct(
                        g_new,
                        g,
                        arc_state[k, S_L],
                        dt,
                        arc_par[k, 1, 5],
                        arc_par[k, 1, 6],
                    )
                if extinct:
                    # the race between recovery voltage and withstand starts at the last
                    # current zero (Johns et al. 1994 time their characteristic from it);
                    # their T_e is the extinction instant counted from the start of the
                    # secondary arc, restrikes included
                    t_x = max(arc_state[k, S_TZERO], arc_state[k, S_TBS])
                    arc_state[k, S_BURN] = 0.0
                    arc_state[k, S_G] = 0.0
                    arc_state[k, S_TEXT] = t_x
                    arc_state[k, S_TE] = t_x - arc_state[k, S_TSEC]
                    arc_state[k, S_VSIGN] = 0.0
                    _new_scatter(arc_state, arc_conf, k)
                    cnt = max(arc_state[k, S_CNT], 1.0)
                    arc_state[k, S_IRMS] = math.sqrt(arc_state[k, S_S2] / cnt)
                    arc_state[k, S_LEXT] = arc_state[k, S_L]
                    _log(log, log_n, 3, t_x, k, arc_state[k, S_IRMS])
                else:
                    arc_state[k, S_G] = g_new
                    arc_state[k, S_L] = l_m
                    if connected and arc_state[k, S_SEC] == 1.0 and arc_state[k, S_REEST] == 0:
                        arc_state[k, S_REEST] = 1.0
                        _log(log, log_n, 8, t, k, 0.0)
                        for pole in range(6):
                            tt = t + tpt_delay[pole // 3]
                            trip_t[pole] = min(trip_t[pole], tt)
                            close_t[pole] = np.inf
                        _log(log, log_n, 6, t + tpt_delay[0], 0, t + tpt_delay[1])
            else:
                out_arc_g[k, n] = 0.0
                out_arc_v[k, n] = vf
                if arc_state[k, S_STARTED] == 1.0 and arc_conf[k, C_RESTRIKE] == 1.0:
                    # one breakdown trial per half cycle of the recovery voltage: the
                    # scatter factor is redrawn at each zero crossing
                    sgn = 1.0 if vf > 0.0 else -1.0
                    if arc_state[k, S_VSIGN] != 0.0 and sgn != arc_state[k, S_VSIGN]:
                        _new_scatter(arc_state, arc_conf, k)
                    arc_state[k, S_VSIGN] = sgn
                    # recovery time: the plateau after t_sat does not count
                    t_rec = t - arc_state[k, S_TEXT]
                    t_sat = arc_conf[k, C_TSAT]
                    t_rec = min(t_rec, t_sat) + max(t_rec - t_sat - arc_conf[k, C_TPLAT], 0.0)
                    withstand = arc_state[k, S_SCAT] * _strength(
                        t_rec,
                        arc_state[k, S_TE],
                        arc_state[k, S_IRMS],
                        arc_state[k, S_LEXT],
                        arc_conf[k, C_CEIL],
                        arc_conf[k, C_RATE],
                    )
                    reign = (t - arc_state[k, S_TEXT]) * omega < 0.5 * math.pi
                    capped = (
                        not reign
                        and arc_conf[k, C_MAXRS] >= 0.0
                        and arc_state[k, S_NRS] >= arc_conf[k, C_MAXRS]
                    )
                    if abs(vf) > withstand and not capped:
                        arc_state[k, S_BURN] = 1.0
                        i_pk = max(math.sqrt(2.0) * arc_state[k, S_IRMS], 1.0)
                        arc_state[k, S_TZERO] = t
                        arc_state[k, S_IPREV] = 0.0
                        if reign:
                            # re-ignition: current resumes less than a quarter cycle after
                            # the current zero (IEC 60050-441-17-45); the arc goes on in its
                            # still-hot, elongated channel
                            l_re = arc_state[k, S_LEXT]
                            arc_state[k, S_L] = l_re
                            arc_state[k, S_G] = i_pk / (arc_par[k, pset, 0] * l_re)
                            _log(log, log_n, 9, t, k, vf)
                        else:
                            # restrike: a quarter cycle or more of zero current (IEC
                            # 60050-441-17-46); the new arc takes the shortest path
                            l0 = arc_par[k, pset, 4]
                            arc_state[k, S_L] = l0
                            arc_state[k, S_G] = i_pk / (arc_par[k, pset, 0] * l0)
                            arc_state[k, S_TEL] = t
                            arc_state[k, S_TBS] = t
                            arc_state[k, S_S2] = 0.0
                            arc_state[k, S_CNT] = 0.0
                            arc_state[k, S_NRS] += 1.0
                            _log(log, log_n, 4, t, k, vf)
        # breaker poles: interrupt at a current zero after contact separation; close on time
        changed = False
        for pole in range(6):
            i_n = ibrk[pole]
            i_p = brk_i_prev[pole]
            if pole_closed[pole] == 1 and t + 1.5 * dt >= trip_t[pole]:
                t_z = np.inf
                if abs(i_n) < 1e-6:
                    t_z = t
                elif i_p * i_n <= 0.0:
                    t_z = t - dt + dt * i_p / (i_p - i_n)
                elif (i_n - i_p) * i_n < 0.0:
                    theta = i_n / (i_p - i_n)  # steps until the extrapolated zero
                    if theta < 1.5:
                        t_z = t + dt * theta
                t_sep = trip_t[pole]
                if t_z < np.inf and t_z >= t_sep - 0.5 * dt:
                    pole_closed[pole] = 0
                    changed = True
                    trip_t[pole] = np.inf  # the trip command is spent
                    _log(log, log_n, 1, max(t_z, t_sep), pole, i_n)
            elif pole_closed[pole] == 0 and (n + 1) * dt >= close_t[pole] - 0.5 * dt:
                pole_closed[pole] = 1
                close_t[pole] = np.inf
                changed = True
                _log(log, log_n, 2, (n + 1) * dt, pole, 0.0)
            brk_i_prev[pole] = i_n
        if changed:
            for k in range(n_arc):
                ph = int(arc_conf[k, C_PHASE])
                connected = pole_closed[ph] + pole_closed[3 + ph] > 0
                if not connected and arc_state[k, S_MODE] == 1.0:
                    arc_state[k, S_MODE] = 2.0
                    if arc_state[k, S_STARTED] == 1.0:
                        t_open = t + dt
                        for row in range(log_n[0] - 1, -1, -1):
                            if log[row, 0] == 1 and int(log[row, 2]) % 3 == ph:
                                t_open = log[row, 1]
                                break
                        arc_state[k, S_SEC] = 1.0
                        arc_state[k, S_TEL] = t_open
                        arc_state[k, S_TBS] = t_open
                        arc_state[k, S_TSEC] = t_open
                        arc_state[k, S_S2] = 0.0
                        arc_state[k, S_CNT] = 0.0
                        _log(log, log_n, 5, t_open, k, 0.0)
                elif connected:
                    arc_state[k, S_MODE] = 1.0
            return n + 1
    return n_total


def _drop_stale_cache() -> None:
    """Forget the on-disk compiled kernel when ``arc.py`` has changed since it was cached.

    numba keys a cached function on its own source file only, but the kernel has the arc
    functions (and their module constants) compiled into it; a hash of ``arc.py`` kept
    beside the cache makes an edited arc model recompile the kernel.
    """
    cache = getattr(run_kernel, "_cache", None)
    cache_dir = getattr(cache, "_cache_path", None)
    if cache is None or cache_dir is None or not hasattr(cache, "flush"):
        return
    digest = hashlib.sha256(Path(_arc.__file__).read_bytes()).hexdigest()
    stamp = Path(cache_dir) / "kernel.run_kernel.arc-sha256"
    try:
        previous = stamp.read_text(encoding="ascii").strip()
    except OSError:
        previous = ""
    if previous == digest:
        return
    try:
        cache.flush()
        stamp.parent.mkdir(parents=True, exist_ok=True)
        stamp.write_text(digest, encoding="ascii")
    except OSError:
        return  # a read-only cache location: numba then compiles in memory each session


_drop_stale_cache()
