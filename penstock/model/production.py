"""Energy stage of a run: flow record, turbines, net head, power and energy.

Net head at each step follows :func:`penstock.energy.net_head`: headwater less
tailwater less the penstock losses at that step's flow (from the steady-hydraulics
stage, with the roughness of the energy basis), plus the head a declared draft tube
recovers over an abrupt exit.  The efficiency curve is the machine's with its
runner-outlet velocity head lost, so a draft tube can only add what it recovers.  For
an impulse turbine with a given runner elevation the head below the runner is lost
(:func:`penstock.turbines.head_datum`).

The plant's turbined flow is capped at the design flow (all units at rated flow);
the maximum plant flow serves the hydraulic checks.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .. import drafttube, energy, gradeline, hydrology, turbines
from ..constants import J_PER_MWH
from ..errors import CaseError
from ..schema import CASE_FILE
from ..turbines import TURBINE_TYPES
from .core import Say, Warning_
from . import steady as steady_stage
from .stages import DesignFlows, Operation, ProductionHeadline, ProductionStage


def _residual(case, index, river):
    monthly = case.residual_monthly or None
    return hydrology.residual_flow(
        index, constant=case.residual_flow, monthly=monthly,
        percent_of_mean=100 * case.residual_percent if case.residual_percent else None,
        mean_flow=float(np.mean(river)) if case.residual_percent else None)


def _draft_tube_recovery(case, n_units):
    """Head the draft tube recovers as a function of total plant flow (all units sharing
    it), or None without a draft tube."""
    dt = case.draft_tube
    if dt is None:
        return None

    def recovery(total_flow):
        q = np.asarray(total_flow, dtype=float) / n_units
        return drafttube.velocity_head_recovery(q, dt["inlet_diameter"], dt["area_ratio"],
                                                dt["cone_angle"])

    return recovery


def design_heads(case, steady):
    """Gross head, penstock loss, draft-tube recovery and net head at the design flow."""
    t = case.turbine
    h_design = case.headwater - float(turbines.head_datum(t["type"], case.tailwater,
                                                          t["runner_elevation"]))
    loss = float(steady.head_loss(case.design_flow))
    rec = _draft_tube_recovery(case, t["units"])
    gain = float(rec(case.design_flow)) if rec is not None else 0.0
    return h_design, loss, gain, float(energy.net_head(h_design, loss, gain))


def check_design_head(case, gross, net, loss):
    """Refuse a design flow whose penstock loss leaves 5 % of the gross head or less
    (:data:`penstock.energy.LEAST_NET_HEAD_FRACTION`)."""
    if net <= energy.LEAST_NET_HEAD_FRACTION * gross:
        raise CaseError(CASE_FILE, "flows.design", f"the penstock loses {loss:.1f} m of "
                        f"the {gross:.1f} m gross head at the design flow "
                        f"{case.design_flow:.4g} m^3/s; expected a smaller design flow or a "
                        "larger pipe")


def run(case, props, steady, warns, methods, tick) -> dict:
    """Operate the plant over the flow record and summarise its energy."""
    tick("energy over the flow record")
    t = case.turbine
    ttype, n = t["type"], t["units"]
    entry = TURBINE_TYPES[ttype]
    rho = props.density
    record = case.flow_record
    index, river = record.index, record.to_numpy(dtype=float)
    q_unit = case.design_flow / n
    hw = case.headwater_at(river, index)
    tw = case.tailwater_at(river)
    z_run = t["runner_elevation"]
    gross = hw - turbines.head_datum(ttype, tw, z_run)
    residual = _residual(case, index, river)
    if np.all(residual.to_numpy() >= river):
        warns.append(Warning_("hydrology", "the residual flow is at or above the river flow at "
                              "every step of the record: the plant never runs"))
    table = t["efficiency_table"]
    if table is None:
        table = turbines.scaled_efficiency_table(ttype, t["peak_efficiency"])
        methods.add("Turbine efficiency", f"typical {ttype} part-load curve scaled to a best "
                    f"efficiency of {t['peak_efficiency']:.3f}", entry["sources"]["efficiency_table"])
    else:
        methods.add("Turbine efficiency", "part-load curve given by the user", "case input")
    min_rel = case.minimum_flow / q_unit if case.minimum_flow is not None else None
    penstock_loss = steady.head_loss
    dt_recovery = _draft_tube_recovery(case, n)

    def total_loss(q):
        """Gross less net head at total flow q (energy.net_head with a zero gross head)."""
        gain = dt_recovery(q) if dt_recovery is not None else 0.0
        return -energy.net_head(0.0, penstock_loss(q), gain)

    drive = dict(gearbox_efficiency=t["gearbox_efficiency"],
                 generator_efficiency=t["generator_efficiency"],
                 transformer_efficiency=t["transformer_efficiency"])
    op = energy.simulate_plant(river, gross, q_unit, density=rho, n_units=n, turbine_type=ttype,
                               efficiency_table=table, head_loss=penstock_loss,
                               head_gain=dt_recovery, residual=residual,
                               minimum_relative_flow=min_rel, availability=t["availability"],
                               **drive)
    methods.add("Plant operation", "residual flow released first; the number of units giving "
                "the most power runs at each step; P = ρ·g·Q·Hn·η_turbine·η_gearbox·"
                "η_generator·η_transformer × availability", "energy balance (hand formula)")
    years = steady.energy_roughness_years
    methods.add("Net head and energy convention", "net head = headwater − tailwater (or an "
                "impulse runner above it) − penstock losses + the head a draft tube recovers "
                "over an abrupt exit; the efficiency curve is the machine's with its "
                "runner-outlet velocity head lost, so a draft tube can only add what it "
                "recovers; penstock losses with the roughness " +
                ("of the pipe as new" if years is None else
                 f"after {years:g} years, half the service life (the mean of a linear growth)")
                + "; a year is the mean over the record's complete calendar years (8,760 h "
                "scaled when there is none), for the energy, the energy lost and the diameter "
                "study alike", "penstock.energy.net_head and mean_annual_weights")

    # installed capacity: all units at rated flow, at the reference (design) levels
    h_design, loss_design, gain_design, hn_design = design_heads(case, steady)
    if case.draft_tube is not None:
        warns.append(Warning_("draft tube", f"the draft tube's recovery ({gain_design:.3f} m at "
                              "the design flow) is added to the head the efficiency curve works "
                              "on, which is taken as the machine's with its outlet velocity head "
                              "lost; if the curve is a whole-machine curve with its draft tube "
                              "(as from model tests), leave [draft_tube] out, or the recovery "
                              "counts twice", severity="note"))
    if gain_design < 0:
        warns.append(Warning_("draft tube", f"the draft-tube cone loses {-gain_design:.3f} m "
                              "more than an abrupt exit at the design flow (Gibson's loss "
                              "factor above one for so wide a cone); expected a narrower "
                              "cone"))
    check_design_head(case, h_design, hn_design, loss_design)
    eta_rated = float(turbines.turbine_efficiency(1.0, ttype, table=table))
    capacity = float(energy.electrical_power(case.design_flow, hn_design, rho, eta_rated,
                                             **drive))
    summ = energy.energy_summary(index, op.power, installed_capacity=capacity,
                                 firm_exceedance=case.firm_exceedance,
                                 power_without_friction=op.power_without_friction,
                                 spill_flow=op.spill_flow, residual_flow=op.residual_flow,
                                 gross_head=gross, density=rho)
    gaps = record.attrs.get("filled_gaps")
    if gaps is not None and len(gaps):
        warns.append(Warning_("hydrology", f"{int(gaps['missing_steps'].sum())} missing steps "
                              f"of the flow record in {len(gaps)} gaps were filled "
                              f"({case.gap_method.replace('_', ' ')}), the first at "
                              f"{gaps['start'].iloc[0]:%Y-%m-%d}"))
    if record.attrs.get("from_duration_table"):
        warns.append(Warning_("hydrology", "the flow record is a representative year built from "
                              "a flow-duration table: monthly energies are not meaningful",
                              severity="note"))
        first, last = record.attrs.get("duration_coverage", (0.0, 1.0))
        if first > hydrology.DURATION_TABLE_ENDS[0] or last < hydrology.DURATION_TABLE_ENDS[1]:
            q = record.to_numpy()
            warns.append(Warning_(
                "hydrology", f"the flow-duration table covers exceedance {100 * first:g} % to "
                f"{100 * last:g} % only; beyond its ends the end flows are held "
                f"({Say(case.unit_system).q(float(q.max()))} up to 0 %, "
                f"{Say(case.unit_system).q(float(q.min()))} down to 100 %), "
                f"{100 * (first + 1 - last):.3g} % of the year, so the energy there is an "
                "extrapolation; expected a table from near 0 % to near 100 %"))
    days = len(record) * record.attrs.get("step_hours", 24.0) / 24.0
    if days < 365.0:
        warns.append(Warning_("hydrology", f"the flow record covers only {days:.3g} days; the "
                              "mean annual energy, capacity factor and firm power are scaled "
                              "from it and do not represent a year of the river's flows; "
                              "expected a record of one year or more"))
    elif summ.mean_annual_basis != "complete calendar years":
        warns.append(Warning_("hydrology", f"mean annual energy is based on "
                              f"{summ.mean_annual_basis}", severity="note"))

    out = {
        "flow_duration": _flow_duration(river, residual.to_numpy(), op.turbined_flow),
        "power_duration": pd.DataFrame({
            "exceedance [%]": 100 * summ.power_duration.exceedance,
            "power when available [kW]": summ.power_duration.flow / 1e3 / t["availability"]}),
        "energy_by_year": _annual(summ),
        "energy_by_month": _monthly(summ),
    }
    tick("design-flow study")
    p_study = np.arange(0.10, 0.601, 0.05)
    usable = np.maximum(river - residual.to_numpy(), 0.0)
    q_study = np.atleast_1d(hydrology.flow_at_exceedance(usable, p_study))
    # keep the design flows the pipe can carry with head to spare (5 % of the gross head)
    feasible = (q_study > 0) & (h_design - total_loss(q_study)
                                > energy.LEAST_NET_HEAD_FRACTION * h_design)
    if not feasible.all():
        warns.append(Warning_("design-flow study", f"{int((~feasible).sum())} of the design "
                              "flows from Q10 to Q60 are left out: zero (the river is below the "
                              "residual flow) or more than the penstock can carry",
                              severity="note"))
    # the case's own design flow joins the study's for the design flow x diameter study,
    # whose dispatch at each design flow comes back as weights on a flow grid
    q_1d = q_study[feasible]
    own = not np.any(np.isclose(q_1d, case.design_flow, rtol=1e-9, atol=0))
    q_all = np.append(q_1d, case.design_flow) if own else q_1d
    flow_grid = np.linspace(0.0, float(q_all.max()) * 1.0001, 512)
    # the pipe's loss computed up to the study's largest flow (the energy stage's own
    # interpolant stops at 1.5 times the maximum plant flow)
    study_loss = penstock_loss if q_all.max() <= 1.5 * case.maximum_flow else \
        steady_stage.loss_function(case, steady.route, props,
                                   steady_stage.energy_roughness(case, steady.route),
                                   q_top=1.05 * float(q_all.max()))
    study_all, weights = energy.design_flow_study(
        index, river, gross, density=rho, head_loss=study_loss, head_gain=dt_recovery,
        residual=residual, n_units=n, turbine_type=ttype, efficiency_table=table,
        minimum_relative_flow=min_rel, design_flows=q_all, availability=t["availability"],
        flow_grid=flow_grid, **drive)
    study = study_all.iloc[:q_1d.size].copy()
    study["design_exceedance"] = p_study[feasible]
    study_all["design_exceedance"] = np.append(p_study[feasible], [np.nan] * int(own))
    out["design_flows"] = DesignFlows(table=study_all, grid=flow_grid, weights=weights,
                                      head_loss=study_loss)
    out["design_flow_study"] = pd.DataFrame({
        "design flow exceedance [%]": 100 * study["design_exceedance"],
        "design flow [m^3/s]": study["design_flow"],
        "installed capacity [kW]": study["installed_capacity"] / 1e3,
        "mean annual energy [MWh]": study["mean_annual_energy"] / J_PER_MWH,
        "capacity factor [%]": 100 * study["capacity_factor"],
        "energy lost to friction [MWh]": study["mean_annual_friction_loss"] / J_PER_MWH,
        "energy spilled [MWh]": study["mean_annual_spill_energy"] / J_PER_MWH,
    })
    tick("turbine and setting")
    out["turbine_choice"], speed = _turbine_choice(case, hn_design, q_unit, capacity / n, rho,
                                                   warns, methods)
    out["turbine_setting"] = _setting(case, props, steady, total_loss, speed, table, drive,
                                      warns, methods)
    out["draft_tube"] = _draft_tube_table(case, props, steady, table, drive, methods)
    out["operation"] = Operation(
        index=index, river=river, gross=gross, op=op, table=table, drive=drive,
        dt_recovery=dt_recovery, total_loss=total_loss,
        step_seconds=float(hydrology.time_step(index).total_seconds()))
    out["headline"] = ProductionHeadline(**{
        "gross_head": h_design, "net_head": hn_design, "total_loss": loss_design,
        "draft_tube_recovery": gain_design,
        "energy_roughness_years": steady.energy_roughness_years,
        "design_flow": case.design_flow, "installed_capacity": capacity,
        "eta_rated": eta_rated,
        "mean_annual_energy": summ.mean_annual_energy, "capacity_factor": summ.capacity_factor,
        "firm_power": summ.firm_power, "friction_energy": summ.mean_annual_friction_loss,
        "spill_energy": summ.mean_annual_spill_energy,
        "residual_energy": summ.mean_annual_residual_energy,
        "speed": speed,
    })
    return ProductionStage(**out)


def _flow_duration(river, residual, turbined) -> pd.DataFrame:
    p = np.linspace(0.0, 1.0, 101)
    p[0], p[-1] = 0.001, 0.999

    def curve(x):
        return hydrology.exceedance_curve(np.asarray(x, float), p).flow

    return pd.DataFrame({
        "exceedance [%]": 100 * p,
        "river flow [m^3/s]": curve(river),
        "flow after residual [m^3/s]": curve(np.maximum(river - residual, 0.0)),
        "turbined flow [m^3/s]": curve(turbined),
    })


def _annual(summ) -> pd.DataFrame:
    a = summ.annual
    return pd.DataFrame({
        "year": a.index.astype(int),
        "energy [MWh]": a["energy"].to_numpy() / J_PER_MWH,
        "complete year": a["complete"].to_numpy(),
        "steps": a["steps"].to_numpy(),
        "energy lost to friction [MWh]": a["friction_loss"].to_numpy() / J_PER_MWH,
        "energy of spilled flow [MWh]": a["spill_energy"].to_numpy() / J_PER_MWH,
        "energy of residual flow [MWh]": a["residual_energy"].to_numpy() / J_PER_MWH,
    })


def _monthly(summ) -> pd.DataFrame:
    m = summ.monthly
    long = m.stack().rename("energy").reset_index()
    long.columns = ["year", "month", "energy"]
    return pd.DataFrame({"year": long["year"].astype(int), "month": long["month"].astype(int),
                         "energy [MWh]": long["energy"].to_numpy() / J_PER_MWH})


def _turbine_choice(case, net_head, q_unit, power_unit, rho, warns, methods):
    t = case.turbine
    ttype = t["type"]
    speed = t["speed"]
    assumed = speed is None
    if assumed:
        speed = turbines.synchronous_speed(ttype, net_head, power_unit, t["grid_frequency"])
    ns = float(turbines.specific_speed(speed, power_unit, net_head))
    cands = turbines.suggest_turbine_types(net_head, q_unit, speed, rho)
    rows = []
    for c in cands:
        e = TURBINE_TYPES[c.turbine_type]
        rows.append({"turbine type": c.turbine_type, "suitability score [-]": c.score,
                     "head range low [m]": e["head_range"][0],
                     "head range high [m]": e["head_range"][1],
                     "flow in range": c.flow_in_range,
                     "specific speed n·√P/H^1.25 (rpm, kW, m) [-]": c.specific_speed,
                     "specific speed in range": c.specific_speed_in_range,
                     "chosen": c.turbine_type == ttype})
    methods.add("Turbine type", "application ranges of head, flow and metric specific speed "
                "n_s = n·√P/H^(5/4)", TURBINE_TYPES[ttype]["sources"]["head_range"])
    fits = turbines.application_ranges(ttype, net_head, q_unit, ns)
    (lo, hi), (slo, shi) = fits.head_range, fits.specific_speed_range
    say = Say(case.unit_system)
    if not fits.head_in_range:
        warns.append(Warning_("turbine", f"net head {say.m(net_head, 1)} is outside the usual "
                              f"{say.m(lo, 0)} to {say.m(hi, 0)} range of a {ttype} turbine"))
    if not fits.flow_in_range:
        qlo, qhi = fits.flow_range
        warns.append(Warning_("turbine", f"the rated flow per unit {say.q(q_unit)} is outside "
                              f"the usual {say.q(qlo)} to {say.q(qhi)} range of a {ttype} "
                              "turbine (read from an application-range chart)",
                              flow=q_unit))
    if not fits.specific_speed_in_range:
        warns.append(Warning_("turbine", f"specific speed {ns:.0f} at {speed:.0f} rpm is outside "
                              f"the {ttype} range {slo:g}–{shi:g}"))
    if assumed:
        warns.append(Warning_("turbine", f"no turbine.speed given: {speed:.1f} rpm (synchronous "
                              f"at {t['grid_frequency']:g} Hz) is assumed for the specific "
                              "speed", severity="note"))
    df = pd.DataFrame(rows)
    if ttype not in set(df["turbine type"]) if len(df) else True:
        df = pd.concat([df, pd.DataFrame([{
            "turbine type": ttype, "suitability score [-]": 0.0, "head range low [m]": lo,
            "head range high [m]": hi, "flow in range": fits.flow_in_range,
            "specific speed n·√P/H^1.25 (rpm, kW, m) [-]": ns,
            "specific speed in range": fits.specific_speed_in_range, "chosen": True}])],
            ignore_index=True)
    df["speed [rpm]"] = speed
    return df, speed


def _setting(case, props, steady, total_loss, speed, table, drive, warns, methods):
    """Turbine setting at each study flow: Thoma for reaction units, clearance for impulse."""
    t = case.turbine
    ttype, n = t["type"], t["units"]
    entry = TURBINE_TYPES[ttype]
    flows = np.asarray(steady.flows, float)
    names = steady.flow_names
    q_plant = np.minimum(flows, case.maximum_flow)
    tw = np.asarray(case.tailwater_at(q_plant + case.residual_flow), float)
    z_run = t["runner_elevation"]
    hn = case.headwater - turbines.head_datum(ttype, tw, z_run) - total_loss(q_plant)
    rows = []
    if entry["impulse"]:
        tw_max = float(case.tailwater_at(float(case.flow_record.max())))
        clearance = drafttube.IMPULSE_CLEARANCE.get(ttype, 1.0)
        methods.add("Turbine setting", f"impulse runner clearance above the highest tailwater "
                    f"({clearance:g} m, common practice)", "common practice (from memory)")
        for name, q, h in zip(names, q_plant, hn):
            margin = None if z_run is None else float(drafttube.impulse_clearance_margin(
                z_run, tw_max, ttype))
            rows.append({"flow case": name, "plant flow [m^3/s]": q, "net head [m]": h,
                         "highest tailwater [m]": tw_max,
                         "required clearance [m]": clearance,
                         "lowest runner elevation [m]": tw_max + clearance,
                         "runner elevation [m]": z_run, "margin [m]": margin})
        if z_run is not None and rows[0]["margin [m]"] < 0:
            warns.append(Warning_("turbine setting", f"the {ttype} runner at {z_run:g} m is less "
                                  f"than {clearance:g} m above the highest tailwater "
                                  f"({tw_max:.2f} m): it may be flooded"))
        return pd.DataFrame(rows)
    methods.add("Turbine setting", "Thoma: Hs = (p_atm − p_v)/(ρg) − σ·Hn, σ from the "
                "specific speed", "de Siervo, F. & de Leva, F. (1976, 1977), Water Power & Dam "
                "Construction 28(8) and 29(12) (from memory)")
    lo, hi = entry["specific_speed_range"]
    q_rated = case.design_flow / n
    for name, q, h, w in zip(names, q_plant, hn, tw):
        k = int(turbines.units_running(q, q_rated, n))
        q_u = q / k
        # overload above the rated flow keeps the rated efficiency (the curves end at 1)
        eta = float(turbines.turbine_efficiency(min(q_u / q_rated, 1.0), ttype, table=table))
        p_unit = float(energy.hydraulic_power(q_u, h, props.density)) * eta
        ns = float(turbines.specific_speed(speed, max(p_unit, 1.0), h))
        ns_c = float(np.clip(ns, lo, hi))
        sigma = float(drafttube.thoma_sigma(ns_c, ttype))
        hs = float(drafttube.allowable_suction_head(props.atmospheric_pressure,
                                                    props.vapour_pressure, props.density,
                                                    sigma, h))
        actual = None if z_run is None else z_run - w
        rows.append({"flow case": name, "plant flow [m^3/s]": q, "units running": k,
                     "net head [m]": h, "specific speed n·√P/H^1.25 (rpm, kW, m) [-]": ns, "Thoma sigma [-]": sigma,
                     "tailwater [m]": w, "allowable suction head [m]": hs,
                     "highest runner elevation [m]": w + hs,
                     "runner elevation [m]": z_run,
                     "margin [m]": None if actual is None else hs - actual})
        if actual is not None and hs - actual < 0:
            warns.append(Warning_("turbine setting", f"runner centreline at {z_run:g} m is "
                                  f"{actual - hs:.2f} m above the highest setting free of "
                                  f"cavitation at the {name} (Thoma σ = {sigma:.3f})",
                                  flow=float(q)))
    return pd.DataFrame(rows)


def _draft_tube_table(case, props, steady, table, drive, methods):
    dt = case.draft_tube
    if dt is None:
        return None
    t = case.turbine
    n = t["units"]
    methods.add("Draft tube", "conical diffuser recovery with Gibson's loss coefficient, "
                "against an abrupt exit that loses the whole outlet velocity head",
                "Gibson, A.H. (1910). On the flow of water through pipes and passages having "
                "converging or diverging boundaries. Proc. R. Soc. Lond. A 83, 366–378")
    flows = np.minimum(np.asarray(steady.flows, float), case.maximum_flow)
    k = turbines.units_running(flows, case.design_flow / n, n)
    q_u = flows / k
    exit_head = drafttube.abrupt_exit_loss(q_u, dt["inlet_diameter"])
    gain = drafttube.velocity_head_recovery(q_u, dt["inlet_diameter"], dt["area_ratio"],
                                            dt["cone_angle"])
    eta = np.array([float(turbines.turbine_efficiency(min(q / (case.design_flow / n), 1.0),
                                                      t["type"], table=table)) for q in q_u])
    return pd.DataFrame({
        "flow case": steady.flow_names, "plant flow [m^3/s]": flows, "units running": k,
        "inlet velocity [m/s]": gradeline.mean_velocity(q_u, dt["inlet_diameter"]),
        "inlet velocity head [m]": exit_head,
        "head recovered over an abrupt exit [m]": gain,
        "remaining draft-tube loss [m]": exit_head - gain,
        "power gained [kW]": np.asarray(energy.electrical_power(flows, gain, props.density,
                                                               eta, **drive)) / 1e3,
    })
