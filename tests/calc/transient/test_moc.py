"""The method of characteristics against what the project did not write: Joukowsky's rise and the
pipeline period for an instantaneous closure of a frictionless line (Joukowsky 1898; any transients text,
e.g. Wylie and Streeter, Fluid Transients in Systems, 1993, ch. 1, from memory), the transmission and
reflection at a junction of two impedances (same text, ch. 1), a second plain-loop implementation of the
same equations, grid refinement, Michaud's rise for a flow stopped linearly (exact for that), and a slow
valve closure between the rigid-column answer (scipy's solve_ivp) and Michaud's estimate."""

from __future__ import annotations

import math

import numpy as np
import pytest

from calc.transient.joints import Fixed, Joint, Loss
from calc.transient.moc import Pipe, System, Watch, grid

G = 9.80665


def Run(L, D, a, f, reaches=0):
    return Pipe(L=L, D=D, a=a, f=f)


def instant(t):
    return 0.0


def linear_closure(Tc):
    return lambda t: max(0.0, 1.0 - t / Tc)


class _SetFlow:
    """A test joint: the end's flow prescribed in time."""

    def __init__(self, flow):
        self.flow = flow

    def start(self, *a):
        pass

    def step(self, t, dt, up, down):
        q = self.flow(t)
        return up[0] - up[1] * q, q, None, None

    def histories(self):
        return {}


class _Answer:
    pass


def run_valve_closure(runs, H_res, Q0, closure, t_end, reaches_min=4, flow=None):
    """Runs from a reservoir at H_res to a valve discharging to the datum, flowing Q0, the valve's
    steady loss what friction leaves (velocity heads left out, as in the plain loops below)."""
    system = System(runs, [None] * (len(runs) + 1), reaches_min=reaches_min)
    head, H0, Qs = H_res, [], []
    for k, n in enumerate(system.grid.counts):
        h = head - system.reach_loss(k, Q0) * np.arange(n + 1)
        H0.append(h)
        Qs.append(np.full(n + 1, Q0))
        head = float(h[-1])
    joints = [Joint(upstream=Fixed(H_res))] + [Joint() for _ in runs[1:]]
    end = _SetFlow(flow) if flow is not None else Joint([Loss(head / Q0 ** 2, phi=closure)], downstream=Fixed(0.0))
    system.joints = joints + [end]
    r = system.run(H0, Qs, t_end, watch=[Watch("valve", len(runs) - 1, -1)])
    out = _Answer()
    out.t, out.H_max, out.H_min = r.t, r.H_max, r.H_min
    out.H_valve, out.Q_valve = r.histories["valve"]["H"], r.histories["valve"]["Q"]
    out.a_used = r.grid.a_used
    return out


def test_instant_closure_of_a_frictionless_line_rises_by_joukowsky_with_period_4L_over_a():
    run = Run(L=1200.0, D=0.5, a=1000.0, f=0.0, reaches=0)
    Q0 = 0.3
    r = run_valve_closure([run], 100.0, Q0, instant, 12.0)
    a = r.a_used[0]
    V0 = Q0 / run.A
    rise = a * V0 / G
    T = 4 * run.L / a
    # the head at the valve: H0 + a V0/g for 2L/a, then H0 - a V0/g for the next 2L/a, and so on
    for t, h in zip(r.t[1:], r.H_valve[1:]):
        phase = (t % T) / T
        if 0.02 < phase < 0.48:
            assert h == pytest.approx(100.0 + rise, rel=1e-12)
        elif 0.52 < phase < 0.98:
            assert h == pytest.approx(100.0 - rise, rel=1e-12)
    assert max(r.H_max[0]) == pytest.approx(100.0 + rise, rel=1e-12)
    assert r.Q_valve[1:].max() == 0.0


def _plain(runs, H_res, Q0, closure, t_end, reaches_min=4):
    """The same equations, written again as plain loops over nodes (a second implementation)."""
    dt = min(r.L / r.a for r in runs) / reaches_min
    n = [max(1, round(r.L / (r.a * dt))) for r in runs]
    a = [r.L / (k * dt) for r, k in zip(runs, n)]
    Bs = [ai / (G * math.pi * r.D ** 2 / 4) for ai, r in zip(a, runs)]
    Rs = [r.f * (r.L / k) / (2 * G * r.D * (math.pi * r.D ** 2 / 4) ** 2) for r, k in zip(runs, n)]
    H = []
    head = H_res
    for k in range(len(runs)):
        row = [head - Rs[k] * Q0 * abs(Q0) * j for j in range(n[k] + 1)]
        H.append(row)
        head = row[-1]
    Q = [[Q0] * (k + 1) for k in n]
    Cv0 = Q0 * Q0 / (2 * H[-1][-1])
    hv = [H[-1][-1]]
    for s in range(1, int(math.ceil(t_end / dt)) + 1):
        nH = [[0.0] * (k + 1) for k in n]
        nQ = [[0.0] * (k + 1) for k in n]
        for k in range(len(runs)):
            B, R = Bs[k], Rs[k]
            for j in range(1, n[k]):
                cp = H[k][j - 1] + B * Q[k][j - 1] - R * Q[k][j - 1] * abs(Q[k][j - 1])
                cm = H[k][j + 1] - B * Q[k][j + 1] + R * Q[k][j + 1] * abs(Q[k][j + 1])
                nQ[k][j] = (cp - cm) / (2 * B)
                nH[k][j] = (cp + cm) / 2
        B0, R0 = Bs[0], Rs[0]
        cm = H[0][1] - B0 * Q[0][1] + R0 * Q[0][1] * abs(Q[0][1])
        nH[0][0], nQ[0][0] = H_res, (H_res - cm) / B0
        for k in range(len(runs) - 1):
            B1, R1, B2, R2 = Bs[k], Rs[k], Bs[k + 1], Rs[k + 1]
            cp = H[k][-2] + B1 * Q[k][-2] - R1 * Q[k][-2] * abs(Q[k][-2])
            cm = H[k + 1][1] - B2 * Q[k + 1][1] + R2 * Q[k + 1][1] * abs(Q[k + 1][1])
            q = (cp - cm) / (B1 + B2)
            nQ[k][-1] = nQ[k + 1][0] = q
            nH[k][-1] = nH[k + 1][0] = cp - B1 * q
        B, R = Bs[-1], Rs[-1]
        cp = H[-1][-2] + B * Q[-1][-2] - R * Q[-1][-2] * abs(Q[-1][-2])
        tau = closure(s * dt)
        if tau <= 0:
            q = 0.0
        else:
            cv = tau * tau * Cv0
            q = -B * cv + math.sqrt((B * cv) ** 2 + 2 * cv * max(cp, 0.0))
        nQ[-1][-1], nH[-1][-1] = q, cp - B * q
        H, Q = nH, nQ
        hv.append(H[-1][-1])
    return np.array(hv)


@pytest.mark.parametrize("runs, closure", [
    ([Run(900.0, 0.4, 1100.0, 0.018, 0)], linear_closure(3.0)),
    ([Run(600.0, 0.5, 1000.0, 0.015, 0), Run(400.0, 0.3, 1200.0, 0.02, 0)], linear_closure(1.5)),
    ([Run(300.0, 0.3, 400.0, 0.02, 0), Run(500.0, 0.25, 1150.0, 0.017, 0), Run(250.0, 0.2, 1300.0, 0.019, 0)],
     instant),
])
def test_the_fast_solver_agrees_with_plain_loops_to_round_off(runs, closure):
    r = run_valve_closure(runs, 80.0, 0.12, closure, 10.0)
    plain = _plain(runs, 80.0, 0.12, closure, 10.0)
    assert np.allclose(r.H_valve, plain, rtol=1e-12, atol=1e-10)


def test_a_junction_transmits_and_reflects_by_the_impedances():
    # A wave from the valve's run (2) reaching a run of another impedance (1): the head at the junction
    # rises by the transmitted part, 2 B1 / (B1 + B2) of the wave (Z = B = a / (g A)).
    up, down = Run(800.0, 0.6, 1000.0, 0.0, 0), Run(400.0, 0.3, 1000.0, 0.0, 0)
    Q0 = 0.1
    r = run_valve_closure([up, down], 100.0, Q0, instant, 0.6, reaches_min=8)
    g = grid([up, down], 8)
    a = g.a_used
    B1, B2 = a[0] / (G * up.A), a[1] / (G * down.A)
    wave = B2 * Q0  # the rise the closure sends up the valve's run
    # highest head reached at the junction before anything comes back from the reservoir (2 L1/a1 later)
    assert r.H_max[0][-1] == pytest.approx(100.0 + wave * 2 * B1 / (B1 + B2), rel=1e-12)
    assert r.H_max[1][-1] == pytest.approx(100.0 + wave, rel=1e-12)


def test_halving_the_step_changes_the_peak_of_a_slow_closure_by_little():
    runs = [Run(1500.0, 0.5, 1100.0, 0.016, 0)]
    coarse = run_valve_closure(runs, 120.0, 0.35, linear_closure(6.0), 20.0, reaches_min=8)
    fine = run_valve_closure(runs, 120.0, 0.35, linear_closure(6.0), 20.0, reaches_min=16)
    peak_c, peak_f = coarse.H_valve.max(), fine.H_valve.max()
    assert abs(peak_c - peak_f) < 0.005 * (peak_f - 120.0)


def test_a_flow_stopped_linearly_over_more_than_2L_over_a_gives_michauds_rise():
    # Michaud (1878; Wylie and Streeter ch. 1, from memory): with the flow at the end brought to rest
    # linearly over Tc > 2L/a, the head there rises by 2 L V0 / (g Tc) at 2L/a and no further (frictionless).
    run = Run(1000.0, 0.5, 1000.0, 0.0, 0)
    Q0, Tc = 0.3, 10.0
    r = run_valve_closure([run], 100.0, Q0, instant, 30.0, flow=lambda t: Q0 * max(0.0, 1.0 - t / Tc))
    estimate = 2 * run.L * (Q0 / run.A) / (G * Tc)
    assert r.H_valve.max() - 100.0 == pytest.approx(estimate * r.a_used[0] / run.a, rel=1e-9)


def test_a_valve_closed_slowly_rises_between_the_rigid_column_and_michaud():
    # A valve's flow falls with its opening and the head it holds, not linearly: its rise lies between the
    # rigid-column answer (L/(g A) dQ/dt = H_res - H_valve, solved here by scipy's solve_ivp, the mean of
    # the elastic answer) and Michaud's (the elastic answer for a flow falling linearly), an estimate.
    from scipy.integrate import solve_ivp

    run = Run(1000.0, 0.5, 1000.0, 0.0, 0)
    Q0, H0, Tc = 0.3, 100.0, 10.0
    r = run_valve_closure([run], H0, Q0, linear_closure(Tc), 30.0, reaches_min=8)

    def rhs(t, y):
        tau = max(1e-9, 1.0 - t / Tc)
        return [G * run.A / run.L * (H0 - H0 * (y[0] / (tau * Q0)) ** 2)]

    sol = solve_ivp(rhs, (0.0, 0.999 * Tc), [Q0], max_step=Tc / 4000, rtol=1e-10, atol=1e-12)
    rigid = max(H0 * (q / ((1 - t / Tc) * Q0)) ** 2 for t, q in zip(sol.t, sol.y[0])) - H0
    michaud = 2 * run.L * (Q0 / run.A) / (G * Tc)
    rise = r.H_valve.max() - H0
    assert rigid < rise < michaud


def _plain_cavities(L, D, a, f, H_res, Q0, closure, t_end, n, Hv):
    """A reservoir, one pipe and a valve to the datum, with vapour cavities at the interior nodes (the discrete
    vapour cavity model: head held at Hv, the flows either side parting, the cavity growing by their
    difference, trapezoidal in time), as plain loops: a second implementation."""
    A = math.pi * D * D / 4
    dt = L / (a * n)
    B = a / (G * A)
    R = f * (L / n) / (2 * G * D * A * A)
    H = [H_res - R * Q0 * Q0 * j for j in range(n + 1)]
    Qu = [Q0] * (n + 1)   # flow in the reach on the node's left
    Qd = [Q0] * (n + 1)   # and on its right
    V = [0.0] * (n + 1)
    k_valve = H[-1] / Q0 ** 2
    out_H, out_V = [H[-1]], [0.0]
    dQ_end = 0.0
    for s in range(1, int(math.ceil(t_end / dt - 1e-9)) + 1):
        nH, nU, nD, nV = H[:], Qu[:], Qd[:], V[:]
        for j in range(1, n):
            cp = H[j - 1] + B * Qd[j - 1] - R * Qd[j - 1] * abs(Qd[j - 1])
            cm = H[j + 1] - B * Qu[j + 1] + R * Qu[j + 1] * abs(Qu[j + 1])
            h = (cp + cm) / 2
            q = (cp - cm) / (2 * B)
            nH[j], nU[j], nD[j], nV[j] = h, q, q, 0.0
            if V[j] > 0 or h < Hv:
                qin = (cp - Hv) / B
                qout = (Hv - cm) / B
                vol = V[j] + 0.5 * dt * ((qout - qin) + (Qd[j] - Qu[j]))
                if vol > 0 or h < Hv:
                    nH[j], nU[j], nD[j], nV[j] = Hv, qin, qout, max(vol, 0.0)
        cm = H[1] - B * Qu[1] + R * Qu[1] * abs(Qu[1])
        nH[0], nU[0], nD[0] = H_res, (H_res - cm) / B, (H_res - cm) / B
        cp = H[n - 1] + B * Qd[n - 1] - R * Qd[n - 1] * abs(Qd[n - 1])
        tau = closure(s * dt)
        k = k_valve / (tau * tau) if tau > 0 else math.inf

        def through(head):  # the valve's flow from a head at its inlet to the datum: k q|q| = head
            return 0.0 if math.isinf(k) else math.copysign(math.sqrt(abs(head) / k), head)

        q = 0.0 if math.isinf(k) else (2 * cp / (B + math.sqrt(B * B + 4 * k * cp)) if cp > 0 else
                                       2 * cp / (B + math.sqrt(B * B - 4 * k * cp)))
        nH[n], nU[n], nD[n], nV[n] = cp - B * q, q, q, 0.0
        if V[n] > 0 or cp - B * q < Hv:
            # the valve's inlet at vapour: the pipe feeds the cavity, the valve draws from it
            qin, qv = (cp - Hv) / B, through(Hv)
            vol = V[n] + 0.5 * dt * ((qv - qin) + dQ_end)
            if vol > 0 or cp - B * q < Hv:
                nH[n], nU[n], nD[n], nV[n] = Hv, qin, qv, max(vol, 0.0)
                dQ_end = qv - qin
            else:
                dQ_end = 0.0
        else:
            dQ_end = 0.0
        H, Qu, Qd, V = nH, nU, nD, nV
        out_H.append(H[-1])
        out_V.append(max(V))
    return np.array(out_H), np.array(out_V)


@pytest.mark.parametrize("L, D, a, f, H_res, Q0, closure", [
    (600.0, 0.3, 1100.0, 0.02, 25.0, 0.12, instant),
    (900.0, 0.25, 1000.0, 0.018, 15.0, 0.07, linear_closure(0.4)),
])
def test_vapour_cavities_agree_with_plain_loops_to_round_off(L, D, a, f, H_res, Q0, closure):
    n = 24
    Hv = -9.9
    pipe = Pipe(L=L, D=D, a=a, f=f)
    system = System([pipe], [None] * 2, reaches_min=n)
    H0 = [H_res - system.reach_loss(0, Q0) * np.arange(n + 1)]
    k = float(H0[0][-1]) / Q0 ** 2
    system.joints = [Joint(upstream=Fixed(H_res)), Joint([Loss(k, phi=closure)], downstream=Fixed(0.0))]
    r = system.run(H0, [np.full(n + 1, Q0)], 6.0, vapour_head=[np.full(n + 1, Hv)], watch=[Watch("valve", 0, -1)])
    plain_H, plain_V = _plain_cavities(L, D, a, f, H_res, Q0, closure, 6.0, n, Hv)
    assert r.cavity_max[0].max() > 1e-4  # the column did part
    assert r.cavity_max[0].max() == pytest.approx(plain_V.max(), rel=1e-10)
    assert np.allclose(r.histories["valve"]["H"], plain_H, rtol=1e-11, atol=1e-9)
