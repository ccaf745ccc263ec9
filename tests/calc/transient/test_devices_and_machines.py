"""Protection devices and machines of the characteristics grid against calculations the project did not
write: the frictionless surge tank's period 2 pi sqrt(L A_s / (g A)) (mass oscillation, any transients
text, e.g. Wylie and Streeter, Fluid Transients in Systems, 1993, ch. 10, from memory); an air vessel and
a pump trip against the rigid-column equations solved by scipy's solve_ivp (the elastic answer tends to
the rigid one as the wave speed grows); the valve closure of a frictionless line against Allievi's
interlocking (chain) equations as Parmakian sets them out (Waterhammer Analysis, 1955, ch. 6, from memory);
and volume kept to round-off in a closed line with a gas cushion.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from calc.transient.devices import AirVessel, SurgeTank
from calc.transient.joints import Fixed, Joint, Loss
from calc.transient.machines import Homologous, PumpMachine
from calc.transient.moc import Pipe, System, Watch

G = 9.80665


def _steady(system, H_start, Q0):
    H0, Qs = [], []
    head = H_start
    for k, n in enumerate(system.grid.counts):
        h = head - system.reach_loss(k, Q0) * np.arange(n + 1)
        H0.append(h)
        Qs.append(np.full(n + 1, Q0))
        head = float(h[-1])
    return H0, Qs


def _crossings(t, y, mean):
    s = np.sign(np.asarray(y) - mean)
    idx = np.nonzero(s[1:] * s[:-1] < 0)[0]
    # linear interpolation of each upward crossing
    up = [i for i in idx if s[i] < 0]
    return [t[i] + (mean - y[i]) * (t[i + 1] - t[i]) / (y[i + 1] - y[i]) for i in up]


def test_a_frictionless_surge_tank_swings_with_the_mass_oscillation_period():
    L, D, a, As = 2000.0, 1.0, 1200.0, 5.0
    A = math.pi * D * D / 4
    pipe = Pipe(L, D, a, 0.0)
    system = System([pipe, Pipe(100.0, D, a, 0.0)], [None] * 3, reaches_min=2)
    tank = SurgeTank(As, bottom=0.0, top=200.0, name="tank")
    n0 = system.grid.counts[0]
    system.devices[(0, n0 - 1)] = tank  # one reach before the valve's run
    Q0 = 1.0
    system.joints = [Joint(upstream=Fixed(100.0)), Joint(), Joint([Loss(1.0, phi=lambda t: 0.0)], downstream=Fixed(0.0))]
    H0, Qs = _steady(system, 100.0, Q0)
    # the valve shuts at once, so the tank takes the whole flow
    system.joints[-1].elements[0].k = 100.0 / Q0 ** 2
    system.run(H0, Qs, 1000.0, watch=[Watch("tank", 0, n0 - 1)])
    t = np.asarray(tank.t)
    ups = _crossings(t, tank.levels, 100.0)
    periods = np.diff(ups)
    L_to_tank = system.chainage[0][n0 - 1]
    expected = 2 * math.pi * math.sqrt(L_to_tank * As / (G * A))
    assert len(periods) >= 2
    # the pipe's own compliance lengthens it by a little (its water column is springy): within 0.5 %
    assert periods.mean() == pytest.approx(expected, rel=5e-3)
    # and the first swing reaches Q0 / As times sqrt(L A_s / (g A)) above the reservoir (frictionless)
    amplitude = Q0 / As * math.sqrt(L_to_tank * As / (G * A))
    assert max(tank.levels) - 100.0 == pytest.approx(amplitude, rel=1e-2)


def test_an_air_vessel_against_the_rigid_column_solved_by_scipy():
    # A reservoir feeds a stiff frictionless pipe that ends at an air vessel; the valve beyond shuts at once,
    # so the column runs into the gas cushion and back: L/(gA) dQ/dt = H_R - H_vessel, dV/dt = -Q,
    # H_vessel = C / V^n - H_atm + z.
    L, D, a = 600.0, 0.3, 8000.0  # a stiff pipe: the elastic answer comes close to the rigid column
    A = math.pi * D * D / 4
    H_R, Q0, h_atm, z, n, V0 = 60.0, 0.08, 10.33, 0.0, 1.2, 0.4
    system = System([Pipe(L, D, a, 0.0), Pipe(6.0, D, a, 0.0)], [None] * 3, reaches_min=2)
    nodes = system.grid.counts[0]
    vessel = AirVessel(volume=2.0, gas=V0, surface=z, h_atm=h_atm, exponent=n, name="vessel")
    system.devices[(0, nodes - 1)] = vessel
    system.joints = [Joint(upstream=Fixed(H_R)), Joint(), Joint([Loss(1.0, phi=lambda t: 0.0)], downstream=Fixed(0.0))]
    H0, Qs = _steady(system, H_R, Q0)
    system.run(H0, Qs, 12.0)
    Lv = system.chainage[0][nodes - 1]
    C = (H_R - z + h_atm) * V0 ** n

    def rhs(t, y):
        Q, V = y
        return [G * A / Lv * (H_R - (C / V ** n - h_atm + z)), -Q]

    sol = solve_ivp(rhs, (0.0, 12.0), [Q0, V0], max_step=1e-3, rtol=1e-10, atol=1e-12)
    gas = np.asarray(vessel.gas)
    assert gas.min() == pytest.approx(sol.y[1].min(), rel=2e-3)
    assert gas.max() == pytest.approx(sol.y[1].max(), rel=2e-3)
    H_peak = C / gas.min() ** n - h_atm + z
    H_peak_rigid = C / sol.y[1].min() ** n - h_atm + z
    assert H_peak == pytest.approx(H_peak_rigid, rel=3e-3)


def test_volume_is_kept_to_round_off_in_a_closed_line_with_a_gas_cushion():
    # Both ends shut, water set moving: the volume the pipe stores (g A / a^2 times the head, by node,
    # halves at the ends) plus the vessel's water never changes.
    L, D, a = 800.0, 0.4, 1000.0
    A = math.pi * D * D / 4
    system = System([Pipe(L, D, a, 0.0)], [None] * 2, reaches_min=40)
    n = system.grid.counts[0]
    vessel = AirVessel(volume=1.0, gas=0.3, surface=0.0, h_atm=10.33, exponent=1.2, name="vessel")
    system.devices[(0, n // 3)] = vessel
    shut = Loss(1.0, phi=lambda t: 0.0)
    system.joints = [Joint([shut], upstream=Fixed(50.0)), Joint([Loss(1.0, phi=lambda t: 0.0)], downstream=Fixed(0.0))]
    H0 = [np.full(n + 1, 50.0)]
    Q0 = [np.full(n + 1, 0.05)]
    dx = L / n
    w = np.full(n + 1, dx)
    w[0] = w[-1] = dx / 2
    a_used = system.grid.a_used[0]
    k = G * A / a_used ** 2

    r = system.run(H0, Q0, 5.0, watch=[Watch(f"n{j}", 0, j) for j in range(n + 1)])
    Hs = np.array([r.histories[f"n{j}"]["H"] for j in range(n + 1)])
    stored = k * (w[:, None] * (Hs - 50.0)).sum(axis=0)
    water = 1.0 - np.asarray(vessel.gas)
    total = stored + water
    assert np.ptp(total) < 1e-12
    assert np.ptp(water) > 1e-3  # something did move


def _trip_system(L, D, a, f, H_s, H_e, curve_h, curve_T, I, omega, Q0, alpha0=1.0):
    unit = Homologous(curve_h, lambda x: (curve_h(x + 1e-7) - curve_h(x - 1e-7)) / 2e-7, curve_T)
    pump = PumpMachine(unit, alpha0, omega, I, trip_at=0.0, name="pump")
    system = System([Pipe(L, D, a, f)], [None] * 2, reaches_min=20)
    system.joints = [Joint([pump, Loss(0.0, check=True)], upstream=Fixed(H_s)), Joint(downstream=Fixed(H_e))]
    return system, pump


def test_a_pump_trip_runs_down_as_the_rigid_column_does():
    # A pump between a sump and a short stiff rising main to a tank: after the trip
    #   L/(g A) dQ/dt = H_s + h(Q, alpha) - H_e - R Q|Q|,   I omega dalpha/dt = -T(Q, alpha)
    # with h = alpha^2 Hc(Q/alpha), T = alpha^2 Tc(Q/alpha), until the check valve shuts at Q = 0.
    L, D, a, f = 300.0, 0.25, 9000.0, 0.02
    A = math.pi * D * D / 4
    H0c, s = 40.0, 2500.0
    Hc = lambda x: H0c - s * x * x  # noqa: E731
    Tc = lambda x: 150.0 + 1500.0 * x  # noqa: E731  torque rising with flow [N m]
    I, omega, H_s, H_e = 1.2, 2 * math.pi * 1450 / 60, 0.0, 25.0
    Rtot = f * L / (2 * G * D * A * A)
    Q0 = math.sqrt((H0c - (H_e - H_s)) / (s + Rtot))
    system, pump = _trip_system(L, D, a, f, H_s, H_e, Hc, Tc, I, omega, Q0)
    n = system.grid.counts[0]
    H0 = [H_s + Hc(Q0) - Rtot * Q0 * Q0 * np.arange(n + 1) / n]
    r = system.run(H0, [np.full(n + 1, Q0)], 4.0)
    assert r.t.size > 10

    def rhs(t, y):
        Q, al = y
        h = al * al * Hc(Q / al) if al > 1e-9 else 0.0
        T = al * al * Tc(Q / al) if al > 1e-9 else 0.0
        return [G * A / L * (H_s + h - H_e - Rtot * Q * abs(Q)), -T / (I * omega)]

    stop = lambda t, y: y[0]  # noqa: E731
    stop.terminal = True
    sol = solve_ivp(rhs, (0.0, 4.0), [Q0, 1.0], events=stop, max_step=1e-3, rtol=1e-10, atol=1e-12)
    t_stop = sol.t_events[0][0]
    t_m = np.asarray(pump.t)
    Q_m = np.asarray(pump.flows)
    stopped = t_m[np.argmax(Q_m <= 0.0)]
    assert stopped == pytest.approx(t_stop, rel=0.02)
    # the speed at half the time to the check valve's closing
    half = t_stop / 2
    al_rigid = np.interp(half, sol.t, sol.y[1])
    al_moc = np.interp(half, t_m, pump.alphas)
    assert al_moc == pytest.approx(al_rigid, rel=0.01)


def _allievi(rho, tau, steps):
    """Allievi's chain equations at the valve at multiples of 2L/a (frictionless line, valve at the end):
    zeta_i^2 - 1 = 2 rho (tau_{i-1} zeta_{i-1} - tau_i zeta_i) - (zeta_{i-1}^2 - 1), zeta^2 = H / H0,
    rho = a V0 / (2 g H0) the pipeline constant; solved for zeta_i (a quadratic) each interval."""
    z = [1.0]
    for i in range(1, steps + 1):
        rhs = 2 * rho * tau[i - 1] * z[-1] - z[-1] ** 2 + 2.0
        # zeta^2 + 2 rho tau_i zeta - rhs = 0
        b = 2 * rho * tau[i]
        z.append((-b + math.sqrt(b * b + 4 * rhs)) / 2)
    return z


def test_a_valve_closure_matches_allievis_chain_equations():
    # Parmakian's worked form (Waterhammer Analysis, 1955, from memory): a valve at the end of a
    # frictionless pipe from a reservoir closing linearly over several 2L/a; the heads at the valve at each
    # multiple of 2L/a from the chain equations, against the characteristics grid at the same instants.
    L, D, a, H0, Q0, Tc = 1500.0, 0.6, 1000.0, 120.0, 0.45, 9.0
    A = math.pi * D * D / 4
    V0 = Q0 / A
    rho = a * V0 / (2 * G * H0)
    T2 = 2 * L / a
    tau = lambda t: max(0.0, 1.0 - t / Tc)  # noqa: E731
    system = System([Pipe(L, D, a, 0.0)], [None] * 2, reaches_min=30)
    system.joints = [Joint(upstream=Fixed(H0)), Joint([Loss(H0 / Q0 ** 2, phi=tau)], downstream=Fixed(0.0))]
    n = system.grid.counts[0]
    r = system.run([np.full(n + 1, H0)], [np.full(n + 1, Q0)], 8 * T2, watch=[Watch("valve", 0, -1)])
    steps = 8
    z = _allievi(rho, [tau(i * T2) for i in range(steps + 1)], steps)
    H_moc = r.histories["valve"]["H"]
    for i in range(1, steps + 1):
        j = int(round(i * T2 / r.grid.dt))
        assert H_moc[j] == pytest.approx(H0 * z[i] ** 2, rel=1e-9)
