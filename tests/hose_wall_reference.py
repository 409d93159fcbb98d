"""A resolved reference for the hose wall, for the tests only: radial transient conduction through
the rubber (and, in case B, through the oil standing in the bore), cylindrical finite volumes.

It checks one claim of the lumped network (thermo_budget.physics.network, nodes HOSE and HOSE_COVER): that on
an adiabatic rig with short pulls and engine-off waits, most of what the bulk oil ends above the
single-temperature energy balance is heat that a real hose wall cannot yet have taken, because its
conduction time t^2/alpha is minutes. The lumped network has the wall as two rings (the liner, the
inner fifth of the thickness, and the cover; rig.hose_rings_m; until it found one node at
mid-wall 38 % short, one node); here the wall is cut into n_cells rings.

Physics (what each piece stands for, and its source):
- Conduction in a cylinder, finite volumes: ring i between faces r_i and r_i+1 holds
  rho c pi (r_i+1^2 - r_i^2) L; two neighbouring centres r_a < r_b exchange 2 pi k L / ln(r_b / r_a)
  (the steady conduction resistance of a cylindrical shell, Incropera, Fundamentals of Heat and Mass
  Transfer, 6th ed., eq. 3.27; the transient method of ch. 5, sec. 5.10, in radial form).
  Time: theta-method (Crank-Nicolson, theta = 1/2; Incropera sec. 5.10.2 for the implicit form).
  (Equation and section numbers recalled from memory.)
- Outer face adiabatic (the rig is adiabatic); for a rig that loses heat, optionally to the air (outer_air).
- Inner face while oil flows: convection to the passing oil, the inner coefficient from the `ht`
  package (independent of thermo_budget): Re < 2300 the mean Nusselt number of simultaneously
  developing laminar flow over the hose length, Baehr and Stephan (ht.conv_internal.
  laminar_entry_Baehr_Stephan); Re >= 2300 Gnielinski (1976) (ht.conv_internal.turbulent_Gnielinski)
  with the smooth-pipe Darcy factor of Clamond (fluids.friction.Clamond). Properties of the oil at the
  driving temperature, no wall-viscosity correction. Between the coefficient and the first ring's
  centre: the conduction of the half ring.
- Inner face while the engine is off, case "A": adiabatic (what the lumped model assumes: it
  couples the hose to the tank only along the standing column, nearly nothing). Case "B": the oil
  standing in the bore, resolved as its own rings (conduction only, which Ra ~ 1e5 in a 18 mm bore
  would enhance: a lower bound on what it gives), starting each wait at the temperature of the oil
  that was flowing, and flushed back into the tank when the pump restarts.
- Materials: the hose wall's rho, c, k are thermo_budget.physics.materials.HOSE_WALL, which were recalled
  from memory (not from a source; +-30 %); the oil's properties come from the package's oil model
  (Cragoe, NBS Misc. Publ. 97; ASTM D341), which its own tests hold against those sources.

Units are in the names; the functions keep no state. `python tests/hose_wall_reference.py` prints the
figures (the adiabatic session, then every shipped scenario).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from fluids.friction import Clamond
from scipy.linalg.lapack import dgtsv
from ht.conv_internal import laminar_entry_Baehr_Stephan, turbulent_Gnielinski

RE_TURBULENT = 2300.0    # the start of Gnielinski's range (ht's docstring: 2300 <= Re <= 5e6)


def inner_coefficient_W_m2K(volume_flow_m3_s, bore_m, length_m, nu_m2_s, k_W_mK, pr):
    """Oil-side coefficient in a tube of bore_m and length_m at volume_flow_m3_s, W/(m^2 K):
    Baehr-Stephan laminar thermal and velocity entry (mean over the length) below Re = 2300,
    Gnielinski above, both from the `ht` package. Returns (h, Re)."""
    velocity = volume_flow_m3_s / (0.25 * np.pi * bore_m**2)
    Re = velocity * bore_m / nu_m2_s
    if Re < RE_TURBULENT:
        Nu = laminar_entry_Baehr_Stephan(Re=Re, Pr=pr, L=length_m, Di=bore_m)
    else:
        Nu = turbulent_Gnielinski(Re=Re, Pr=pr, fd=Clamond(Re, 0.0))
    return Nu * k_W_mK / bore_m, Re


@dataclass(frozen=True)
class Rings:
    """Concentric rings of one material or two: faces (n+1,) m, centres (n,) m, capacity (n,) J/K,
    conductance between neighbouring centres (n-1,) W/K. L is the length of the cylinder."""
    faces_m: np.ndarray
    centres_m: np.ndarray
    capacity_J_K: np.ndarray
    link_W_K: np.ndarray


def rings(faces_m, rho_c_J_m3K, k_W_mK, length_m) -> Rings:
    """Rings between the given faces; rho_c and k are one value per ring. The centre of a ring is
    the mid-radius (the innermost disc's, of a solid cylinder, half its radius); two neighbours are
    joined by the shell conductances of their halves in series, 2 pi k L / ln(r_out / r_in) each."""
    faces = np.asarray(faces_m, dtype=float)
    centres = 0.5 * (faces[:-1] + faces[1:])
    rho_c = np.broadcast_to(np.asarray(rho_c_J_m3K, dtype=float), centres.shape)
    k = np.broadcast_to(np.asarray(k_W_mK, dtype=float), centres.shape)
    capacity = rho_c * np.pi * (faces[1:] ** 2 - faces[:-1] ** 2) * length_m
    inner_half = np.log(faces[1:-1] / centres[:-1]) / (2 * np.pi * k[:-1] * length_m)
    outer_half = np.log(centres[1:] / faces[1:-1]) / (2 * np.pi * k[1:] * length_m)
    return Rings(faces, centres, capacity, 1.0 / (inner_half + outer_half))


def _theta_step(T, capacity, link, dt_s, inner_W_K=0.0, inner_T_K=0.0, theta=0.5, outer_W_K=0.0, outer_T_K=0.0):
    """One theta-method step of C dT/dt = flows between neighbours + inner_W_K (inner_T - T[0])
    + outer_W_K (outer_T - T[-1]) (outer face adiabatic by default)."""
    n = T.size
    # flows: F = -A T + s, with A tridiagonal symmetric
    diag = np.zeros(n)
    diag[:-1] += link
    diag[1:] += link
    diag[0] += inner_W_K
    diag[-1] += outer_W_K
    s = np.zeros(n)
    s[0] = inner_W_K * inner_T_K
    s[-1] += outer_W_K * outer_T_K
    AT = diag * T
    AT[:-1] -= link * T[1:]
    AT[1:] -= link * T[:-1]
    rhs = capacity / dt_s * T - (1 - theta) * AT + s
    # (C/dt + theta A) T1 = rhs, tridiagonal (LAPACK's gtsv, Gaussian elimination with pivoting)
    d = capacity / dt_s + theta * diag
    if n == 1:
        return rhs / d
    off = -theta * link
    return dgtsv(off, d, off, rhs)[3]


@dataclass(frozen=True)
class HoseWall:
    """The hose and its wall material. Lengths in m, rho_c in J/(m^3 K), k in W/(m K)."""
    bore_m: float
    outside_m: float
    length_m: float
    rho_c_J_m3K: float
    k_W_mK: float

    def capacity_J_K(self):
        return self.rho_c_J_m3K * 0.25 * np.pi * (self.outside_m**2 - self.bore_m**2) * self.length_m

    def conduction_time_s(self):
        """t^2 / alpha of the wall, s (alpha = k / rho c)."""
        return (0.5 * (self.outside_m - self.bore_m)) ** 2 * self.rho_c_J_m3K / self.k_W_mK


@dataclass(frozen=True)
class Drive:
    """What the inner face sees, as functions of time (s): the flowing oil's temperature (K), whether
    oil flows, and the inner coefficient (W/(m^2 K)) at that time; the standing oil's rho c
    (J/(m^3 K)) and k (W/(m K)) for case B."""
    oil_K: object
    flowing: object
    h_W_m2K: object
    standing_rho_c_J_m3K: float
    standing_k_W_mK: float
    breaks_s: tuple = ()        # the times at which the inputs change (step boundaries), s


def time_grid_s(end_s, dt_s, breaks_s=()):
    """Time points from 0 to end_s at most dt_s apart, with a point on every break, so that no step
    of the integration straddles a change of the inputs."""
    edges = np.unique(np.concatenate([[0.0, end_s], [b for b in breaks_s if 0.0 < b < end_s]]))
    pieces = [np.linspace(a, b, max(1, int(np.ceil((b - a) / dt_s - 1e-9))) + 1)[:-1] for a, b in zip(edges[:-1], edges[1:])]
    return np.concatenate(pieces + [[end_s]])


@dataclass
class Result:
    """The reference's history at its time points (J, since the start): the heat the rubber has
    taken, the heat it took from flowing oil, the heat flushed back to the tank by standing oil at
    each restart (summed), and the standing column's heat deficit not yet flushed. First law:
    wall_heat = from_flow + flushed + pending at every point."""
    time_s: np.ndarray
    wall_heat_J: np.ndarray
    from_flow_J: np.ndarray
    flushed_J: np.ndarray
    pending_J: np.ndarray
    wall_K: np.ndarray          # the rubber's ring temperatures at the end


def simulate(hose: HoseWall, drive: Drive, T0_K: float, end_s: float, case: str = "A", n_cells: int = 40,
             dt_s: float = 0.2, n_oil_cells: int | None = None, theta: float = 0.5, wall_faces_m=None,
             outer=None) -> Result:
    """Integrate the wall from a uniform T0_K to end_s.

    wall_faces_m : optional faces of the rubber's rings (bore/2 to outside/2), m; by default n_cells
    equal rings.
    outer : optional function (outer ring's temperature K) -> (W/K from the outer ring's centre to the
    air, air temperature K), for a rig that is not adiabatic (outer_air); the heat lost through it
    is not in the Result's first-law columns (they then sum to more than wall_heat_J).
    case "A": inner face adiabatic with the engine off. case "B": the standing oil is resolved
    (n_oil_cells rings of the bore; by default as many per unit of radius as the wall has, at least 8).
    """
    if case not in ("A", "B"):
        raise ValueError(f"case must be 'A' or 'B', got {case!r}")
    r_i, r_o, L = 0.5 * hose.bore_m, 0.5 * hose.outside_m, hose.length_m
    faces_wall = np.linspace(r_i, r_o, n_cells + 1) if wall_faces_m is None else np.asarray(wall_faces_m, dtype=float)
    n_cells = faces_wall.size - 1
    wall = rings(faces_wall, hose.rho_c_J_m3K, hose.k_W_mK, L)
    half_ring_W_K = 2 * np.pi * hose.k_W_mK * L / np.log(wall.centres_m[0] / r_i)
    if n_oil_cells is None:
        n_oil_cells = max(8, int(round(n_cells * r_i / (r_o - r_i))))
    faces = np.concatenate([np.linspace(0.0, r_i, n_oil_cells + 1), wall.faces_m[1:]])
    rho_c = np.concatenate([np.full(n_oil_cells, drive.standing_rho_c_J_m3K), np.full(n_cells, hose.rho_c_J_m3K)])
    k = np.concatenate([np.full(n_oil_cells, drive.standing_k_W_mK), np.full(n_cells, hose.k_W_mK)])
    both = rings(faces, rho_c, k, L)
    column_capacity_J_K = both.capacity_J_K[:n_oil_cells]

    times = time_grid_s(end_s, dt_s, drive.breaks_s)
    T = np.full(n_cells, float(T0_K))
    column = None                  # the standing oil's rings while the engine is off (case B)
    column_start_K = 0.0
    from_flow = flushed = 0.0
    history = [(0.0, 0.0, 0.0, 0.0)]
    for t0, t1 in zip(times[:-1], times[1:]):
        mid, h = 0.5 * (t0 + t1), t1 - t0
        G_out, T_air = (0.0, 0.0) if outer is None else outer(T[-1])     # lagged by one step
        if drive.flowing(mid):
            if column is not None:             # the pump restarts: the column goes back to the tank
                flushed += float(np.sum(column_capacity_J_K * (column_start_K - column)))
                column = None
            hA = drive.h_W_m2K(mid) * np.pi * hose.bore_m * L
            G, T_oil = 1.0 / (1.0 / hA + 1.0 / half_ring_W_K), drive.oil_K(mid)
            T1 = _theta_step(T, wall.capacity_J_K, wall.link_W_K, h, G, T_oil, theta, G_out, T_air)
            from_flow += G * (T_oil - theta * T1[0] - (1 - theta) * T[0]) * h
            T = T1
        elif case == "A":                      # adiabatic inside and out: heat moves only within the wall
            T = _theta_step(T, wall.capacity_J_K, wall.link_W_K, h, 0.0, 0.0, theta, G_out, T_air)
        else:
            if column is None:                 # the pump stops: the bore holds the oil that was flowing
                column_start_K = float(drive.oil_K(t0))
                column = np.full(n_oil_cells, column_start_K)
            state = _theta_step(np.concatenate([column, T]), both.capacity_J_K, both.link_W_K, h, 0.0, 0.0, theta,
                                G_out, T_air)
            column, T = state[:n_oil_cells], state[n_oil_cells:]
        pending = 0.0 if column is None else float(np.sum(column_capacity_J_K * (column_start_K - column)))
        history.append((float(np.sum(wall.capacity_J_K * (T - T0_K))), from_flow, flushed, pending))
    wall_heat, flow_heat, flushed_heat, pending_heat = (np.array(c) for c in zip(*history))
    return Result(times, wall_heat, flow_heat, flushed_heat, pending_heat, T)


def standing_column_heat_J(bore_m, length_m, rho_c_J_m3K, k_W_mK, start_K, wall_K, duration_s, n_cells=24,
                           dt_s=0.2, theta=0.5):
    """Heat that oil standing in a tube gives to a wall held at wall_K (a function of time, K) over
    duration_s, starting uniform at start_K (conduction only), J; and the column's rings at the end.
    The wall is taken as isothermal: a metal's effusivity sqrt(k rho c) is some 30 times the oil's
    (steel about 13,600, oil about 470 W s^0.5/(m^2 K)), so the face barely moves."""
    R = 0.5 * bore_m
    col = rings(np.linspace(0.0, R, n_cells + 1), rho_c_J_m3K, k_W_mK, length_m)
    face_W_K = 2 * np.pi * k_W_mK * length_m / np.log(R / col.centres_m[-1])
    # the chain from the wall inwards: ring n-1 first, so that _theta_step's inner face is the wall
    cap, link = col.capacity_J_K[::-1], col.link_W_K[::-1]
    T = np.full(n_cells, float(start_K))
    steps = max(1, int(np.ceil(duration_s / dt_s)))
    h = duration_s / steps
    for i in range(steps):
        T = _theta_step(T, cap, link, h, face_W_K, wall_K((i + 0.5) * h), theta)
    return float(np.sum(cap * (start_K - T))), T[::-1]


def bodies_heat_J(capacity_J_K, flowing_W_K, drive: Drive, T0_K, end_s, case="A", passage_bore_m=0.02,
                  passage_length_m=1.0, n_oil_cells=24, dt_s=0.2, theta=0.5):
    """The metal bodies as one isothermal node (as the lumped model has them) coupled to the flowing
    oil by flowing_W_K(t) while oil flows; with the engine off, case "A": nothing (the model's
    coupling through the standing hose column is some 1e-3 W/K), case "B": the oil standing in their
    passages (a tube of passage_bore_m and passage_length_m, conduction only) gives heat to the
    metal face. Returns the metal's heat since the start at each time point (J) and the heat the
    standing oil gave, summed (J)."""
    R = 0.5 * passage_bore_m
    col = rings(np.linspace(0.0, R, n_oil_cells + 1), drive.standing_rho_c_J_m3K, drive.standing_k_W_mK,
                passage_length_m)
    face_W_K = 2 * np.pi * drive.standing_k_W_mK * passage_length_m / np.log(R / col.centres_m[-1])
    cap, link = col.capacity_J_K[::-1], col.link_W_K[::-1]        # from the metal face inwards
    times = time_grid_s(end_s, dt_s, drive.breaks_s)
    T_metal, column, from_standing = float(T0_K), None, 0.0
    heat = [0.0]
    for t0, t1 in zip(times[:-1], times[1:]):
        mid, h = 0.5 * (t0 + t1), t1 - t0
        if drive.flowing(mid):
            column = None
            G, T_oil = flowing_W_K(mid), drive.oil_K(mid)
            T_metal = T_oil + (T_metal - T_oil) * np.exp(-G * h / capacity_J_K)    # exact for a frozen G
        elif case == "B":
            if column is None:
                column = np.full(n_oil_cells, float(drive.oil_K(t0)))
            column1 = _theta_step(column, cap, link, h, face_W_K, T_metal, theta)
            q = float(np.sum(cap * (column - column1)))
            column, T_metal, from_standing = column1, T_metal + q / capacity_J_K, from_standing + q
        heat.append(capacity_J_K * (T_metal - T0_K))
    return times, np.array(heat), from_standing


def body_conductance_from_trace(rig, steps, trace):
    """The lumped model's own oil -> bodies conductance while oil flows, W/K, as a function of time:
    node_equations at the trace's points within pulls (thermo_budget.physics.network), linear between them."""
    from thermo_budget.physics.network import HARDWARE, OIL, Inputs, node_equations
    from thermo_budget.engine.session import pump_flow_m3_s
    starts = np.concatenate([[0.0], np.cumsum([s.duration_s for s in steps])])
    t_pts, G_pts = [], []
    for i in range(1, trace.time_s.shape[0]):
        index = trace.step_index[i]
        step = steps[index]
        if not step.flowing:
            continue
        fraction = (trace.time_s[i, 0] - starts[index]) / step.duration_s
        Q = float(pump_flow_m3_s(rig.displacement_m3, step.rpm_at(fraction), rig.volumetric_efficiency))
        L = node_equations(rig, trace.T_K[i], Inputs(power_W=np.array([float(step.power_at(fraction))]),
                                                     volume_flow_m3_s=np.array([Q])))[1]
        t_pts.append(float(trace.time_s[i, 0]))
        G_pts.append(float(-L[0, OIL, HARDWARE]))
    return lambda t: float(np.interp(t, t_pts, G_pts))


# --- driving the reference from the package's trace ---------------------------------------------

def drive_from_trace(rig, steps, trace, T_offset_K=None):
    """A Drive from a thermo_budget trace of one design on `rig` over `steps`.

    The flowing oil's temperature is the mean loop oil temperature the lumped hose node sees: the
    bulk (the trace's oil, linear between its points) plus half the return-line rise P / (rho Q c_p)
    while a loaded pump runs; the hose carries oil from the tank (at the bulk) and back from the
    valve (at the return line). The same temperature as the lumped node's, so that the comparison
    tests the wall's conduction and not the choice of driving temperature.
    T_offset_K : optional (times_s, offset_K) to add (a feedback correction, see feedback_drive).
    """
    from thermo_budget.engine.session import pump_flow_m3_s

    t_pts = trace.time_s[:, 0]
    oil_pts = trace.T_K[:, 0, 0]
    starts = np.concatenate([[0.0], np.cumsum([s.duration_s for s in steps])])

    def step_at(t):
        """The step running at time t, and the fraction of it done."""
        i = min(max(int(np.searchsorted(starts, t, side="right") - 1), 0), len(steps) - 1)
        return steps[i], (t - starts[i]) / steps[i].duration_s

    def flow_m3_s(t):
        step, fraction = step_at(t)
        rpm = float(step.rpm_at(fraction))
        return float(pump_flow_m3_s(rig.displacement_m3, rpm, rig.volumetric_efficiency)) if step.flowing else 0.0

    def bulk_K(t):
        T = float(np.interp(t, t_pts, oil_pts))
        if T_offset_K is not None:
            T += float(np.interp(t, T_offset_K[0], T_offset_K[1]))
        return T

    def oil_K(t):
        T = bulk_K(t)
        Q = flow_m3_s(t)
        if Q > 0:
            step, fraction = step_at(t)
            cap_rate = float(rig.oil.density_kg_m3(T) * Q * rig.oil.specific_heat(T))
            T += 0.5 * float(step.power_at(fraction)) * float(np.mean(rig.power_multiplier)) / cap_rate
        return T

    def h_W_m2K(t):
        T = oil_K(t)
        nu, k, _, _, pr = (float(np.atleast_1d(p)[0]) for p in rig.oil.transport(np.array([T])))
        return inner_coefficient_W_m2K(flow_m3_s(t), rig.hose_inner_diameter_m, rig.hose_length_m, nu, k, pr)[0]

    T_mid = float(np.mean(oil_pts))
    _, k_oil, cp, rho, _ = (float(np.atleast_1d(p)[0]) for p in rig.oil.transport(np.array([T_mid])))
    return Drive(oil_K=oil_K, flowing=lambda t: flow_m3_s(t) > 0, h_W_m2K=h_W_m2K,
                 standing_rho_c_J_m3K=rho * cp, standing_k_W_mK=k_oil, breaks_s=tuple(starts))


def outer_air(rig, hose: HoseWall, n_cells: int):
    """The outer face to the air, for `simulate(outer=...)`: the package's own coefficient of the
    hoses' outside (natural convection on a horizontal cylinder by Churchill and Chu, combined with
    the rig's air speed by Churchill 1977, times the rig's convection multiplier, plus grey radiation,
    Incropera eqs. 1.7-1.9), read off the production path (network.ambient_conductances_W_K,
    whose hose conductance is that coefficient over the outside area in series with the rubber from
    the cover's centre), in series with the outer half of the outermost ring; the surface taken at
    the ring's temperature."""
    from thermo_budget.physics.network import ambient_conductances_W_K
    from thermo_budget.physics.rig import hose_rings_m
    from thermo_budget.physics.correlations import cylinder_wall_conductance_W_K
    from thermo_budget.physics.materials import HOSE_WALL
    r_o = 0.5 * hose.outside_m
    centre = r_o - 0.5 * (r_o - 0.5 * hose.bore_m) / n_cells
    half_W_K = 2 * np.pi * hose.k_W_mK * hose.length_m / np.log(r_o / centre)
    area = np.pi * hose.outside_m * hose.length_m
    T_air = float(rig.ambient_K)
    r_cover = float(np.atleast_1d(hose_rings_m(rig.hose_inner_diameter_m, rig.hose_outer_diameter_m)[4])[0])
    cover_W_K = float(cylinder_wall_conductance_W_K(2 * r_cover, hose.outside_m, hose.length_m,
                                                    HOSE_WALL["conductivity_W_mK"]))

    def coupling(T_surface_K):
        Ts = np.array([max(float(T_surface_K), T_air + 1e-3)])
        G = float(np.atleast_1d(ambient_conductances_W_K(rig, Ts, Ts, Ts)[2])[0])
        if G <= 0.0:
            return 0.0, T_air
        h = 1.0 / (area * (1.0 / G - 1.0 / cover_W_K))
        return 1.0 / (1.0 / (h * area) + 1.0 / half_W_K), T_air
    return coupling


def hose_of(rig, wall_material) -> HoseWall:
    """The rig's hose with a wall material dict (density_kg_m3, specific_heat_J_kgK, conductivity_W_mK)."""
    return HoseWall(bore_m=rig.hose_inner_diameter_m, outside_m=rig.hose_outer_diameter_m, length_m=rig.hose_length_m,
                    rho_c_J_m3K=wall_material["density_kg_m3"] * wall_material["specific_heat_J_kgK"],
                    k_W_mK=wall_material["conductivity_W_mK"])


def lumped_hose_heat_J(rig, trace):
    """The heat the lumped hose nodes (the liner and the cover) have taken at each trace point, J."""
    from thermo_budget.physics.network import HOSE_RINGS, heat_capacities_J_K
    C = heat_capacities_J_K(rig, trace.T_K[:1, 0, :])[0]
    return sum(C[i] * (trace.T_K[:, 0, i] - trace.T_K[0, 0, i]) for i in HOSE_RINGS)


def feedback_offset(rig, trace, result: Result):
    """The bulk's shift if the oil had given the reference's heat to the hose instead of the lumped
    node's, at the trace's times: -(Q_ref - Q_lumped) / C_oil, K (a one-way correction; the oil
    node's capacity alone, so the larger of the plausible shifts)."""
    from thermo_budget.physics.network import OIL, heat_capacities_J_K
    t = trace.time_s[:, 0]
    q_ref = np.interp(t, result.time_s, result.wall_heat_J)
    C_oil = heat_capacities_J_K(rig, trace.T_K[:, 0, :])[:, OIL]
    return t, -(q_ref - lumped_hose_heat_J(rig, trace)) / C_oil


def with_feedback(rig, steps, trace, hose, T0_K, end_s, case, **kw):
    """The reference driven by the trace, then once more with the bulk shifted by what the reference
    took beyond the lumped node (feedback_offset). Returns (first Result, corrected Result, drive)."""
    first = simulate(hose, drive_from_trace(rig, steps, trace), T0_K, end_s, case, **kw)
    drive = drive_from_trace(rig, steps, trace, T_offset_K=feedback_offset(rig, trace, first))
    return first, simulate(hose, drive, T0_K, end_s, case, **kw), drive


def figures(rig, steps, trace, T_eq_K, T0_K, n_cells=40):
    """The comparison of one session: lumped against resolved hose, both cases, and what each
    implies for the bulk oil at the end (J and K). The wall as our model has it; the bodies as our
    model has them, and with the oil standing in their passages (case B) as a second figure."""
    from thermo_budget.physics.materials import HOSE_WALL
    from thermo_budget.physics.network import HARDWARE, OIL, heat_capacities_J_K
    end_s = float(trace.time_s[-1, 0])
    hose = hose_of(rig, HOSE_WALL)
    C = heat_capacities_J_K(rig, trace.T_K[-1, 0][None, :])[0]
    q_lumped = float(lumped_hose_heat_J(rig, trace)[-1])
    q_full = rig.hose_capacity_J_K * (T_eq_K - T0_K)
    excess = float(trace.T_K[-1, 0, OIL]) - T_eq_K
    out = {"bulk_excess_model_K": excess, "hose_lumped_J": q_lumped, "hose_at_balance_J": q_full,
           "hose_deficit_lumped_K": (q_lumped - q_full) / rig.hose_capacity_J_K,
           "conduction_time_s": hose.conduction_time_s()}
    G_bodies = body_conductance_from_trace(rig, steps, trace)
    passage_length = rig.internal_area_m2 / (np.pi * rig.passage_diameter_m)
    for case in ("A", "B"):
        first, ref, drive = with_feedback(rig, steps, trace, hose, T0_K, end_s, case, n_cells=n_cells)
        q = float(ref.wall_heat_J[-1])
        out[f"hose_{case}_J"] = q
        out[f"hose_{case}_one_way_J"] = float(first.wall_heat_J[-1])
        out[f"hose_deficit_{case}_K"] = (q - q_full) / rig.hose_capacity_J_K
        out[f"bulk_excess_{case}_K"] = excess - (q - q_lumped) / C[OIL]
        if case == "B":
            out["hose_B_from_standing_J"] = float(ref.flushed_J[-1] + ref.pending_J[-1])
            out["hose_B_pending_J"] = float(ref.pending_J[-1])
            _, qa, _ = bodies_heat_J(rig.hardware_capacity_J_K, G_bodies, drive, T0_K, end_s, "A",
                                     rig.passage_diameter_m, passage_length)
            _, qb, given = bodies_heat_J(rig.hardware_capacity_J_K, G_bodies, drive, T0_K, end_s, "B",
                                         rig.passage_diameter_m, passage_length)
            out["bodies_model_J"] = rig.hardware_capacity_J_K * float(trace.T_K[-1, 0, HARDWARE] - T0_K)
            out["bodies_replica_J"], out["bodies_B_J"] = float(qa[-1]), float(qb[-1])
            out["bodies_B_from_standing_J"] = given
            out["bulk_excess_B_and_bodies_K"] = out["bulk_excess_B_K"] - (qb[-1] - qa[-1]) / C[OIL]
    return out


def session_figures(rig, steps, trace, n_cells=40):
    """For any rig (losses to the air included): the heat the hose took from the oil by the end of
    the session, lumped (its stored heat plus what it lost to the air, by the package's own
    conductance, trapezoidal over the trace) and resolved, cases A and B (one-way, driven by the
    trace), the bodies' extra heat from their standing oil, and the bulk shift each implies
    (-extra heat / C_oil, K). The bodies' replica has no loss to the air: its B - A is the figure."""
    from thermo_budget.physics.network import hose_to_ambient_W_K
    from thermo_budget.physics.materials import HOSE_WALL
    from thermo_budget.physics.network import HOSE_COVER, OIL, heat_capacities_J_K
    end_s = float(trace.time_s[-1, 0])
    T0 = float(trace.T_K[0, 0, OIL])
    hose = hose_of(rig, HOSE_WALL)
    drive = drive_from_trace(rig, steps, trace)
    C_oil = float(heat_capacities_J_K(rig, trace.T_K[-1, 0][None, :])[0, OIL])
    T_hose = trace.T_K[:, 0, HOSE_COVER]      # the cover loses to the air
    g_air = np.array([float(np.atleast_1d(hose_to_ambient_W_K(rig, np.array([T])))[0]) for T in T_hose])
    lumped_stored = float(lumped_hose_heat_J(rig, trace)[-1])
    lumped_taken = lumped_stored + float(np.trapezoid(g_air * (T_hose - rig.ambient_K), trace.time_s[:, 0]))
    out = {"C_oil_J_K": C_oil, "hose_lumped_stored_J": lumped_stored, "hose_lumped_taken_J": lumped_taken}
    for case in ("A", "B"):
        r = simulate(hose, drive, T0, end_s, case, n_cells=n_cells, outer=outer_air(rig, hose, n_cells))
        out[f"hose_{case}_stored_J"] = float(r.wall_heat_J[-1])
        out[f"hose_{case}_taken_J"] = float(r.from_flow_J[-1] + r.flushed_J[-1] + r.pending_J[-1])
    G = body_conductance_from_trace(rig, steps, trace) if any(s.flowing for s in steps) else (lambda t: 0.0)
    passage_length = rig.internal_area_m2 / (np.pi * rig.passage_diameter_m)
    _, qa, _ = bodies_heat_J(rig.hardware_capacity_J_K, G, drive, T0, end_s, "A", rig.passage_diameter_m, passage_length)
    _, qb, _ = bodies_heat_J(rig.hardware_capacity_J_K, G, drive, T0, end_s, "B", rig.passage_diameter_m, passage_length)
    out["bodies_B_extra_J"] = float(qb[-1] - qa[-1])
    out["bulk_shift_A_vs_lumped_K"] = -(out["hose_A_taken_J"] - lumped_taken) / C_oil
    out["bulk_shift_B_vs_A_hose_K"] = -(out["hose_B_taken_J"] - out["hose_A_taken_J"]) / C_oil
    out["bulk_shift_B_vs_A_bodies_K"] = -out["bodies_B_extra_J"] / C_oil
    return out


if __name__ == "__main__":      # python tests/hose_wall_reference.py: the figures of the report
    import sys
    from pathlib import Path
    sys.path.insert(0, str(Path(__file__).resolve().parent))
    from conftest import ADIABATIC_PULL, ENGINE_OFF_30S, adiabatic_raw, single_temperature_K

    from thermo_budget.planning.answers import TRACE_RESOLUTION
    from thermo_budget.inputs.scenario import load_scenario
    from thermo_budget.inputs.rig_build import build_rig
    from thermo_budget.engine.solver import integrate

    scenario = load_scenario(adiabatic_raw())
    rig = build_rig(scenario)
    steps = [ADIABATIC_PULL, ENGINE_OFF_30S] * 20
    trace = integrate(rig, steps, scenario.start_K, resolution=TRACE_RESOLUTION)
    T_eq = single_temperature_K(rig, scenario.start_K, 20 * 10 * 10000.0)
    print("adiabatic rig, 20 x (10 kW x 10 s, 30 s engine off):")
    for key, value in figures(rig, steps, trace, T_eq, scenario.start_K).items():
        print(f"  {key:32s} {value:12.3f}")
    for path in sorted((Path(__file__).resolve().parent.parent / "scenarios").glob("*.toml")):
        scenario = load_scenario(path)
        rig = build_rig(scenario)
        trace = integrate(rig, scenario.steps, scenario.start_K, resolution=TRACE_RESOLUTION)
        print(f"{path.name}:")
        for key, value in session_figures(rig, scenario.steps, trace).items():
            print(f"  {key:32s} {value:12.3f}")
