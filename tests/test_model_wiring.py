"""Wiring: each stage calls the physics function that the published-value tests cover,
with the case's own inputs (a spy wraps the function and records its calls)."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import CASES

import penstock
from penstock import (
    diameter,
    economics,
    energy,
    gradeline,
    pipewall,
    surge,
    transients,
    turbines,
    water,
)
from penstock.model import run_case, sizing


class Spy:
    def __init__(self, monkeypatch, module, name):
        self.calls = []
        real = getattr(module, name)

        def spy(*args, **kwargs):
            self.calls.append((args, kwargs))
            return real(*args, **kwargs)

        monkeypatch.setattr(module, name, spy)


@pytest.fixture
def alder():
    return penstock.load_case(CASES / "alder-gorge-high-head")


def test_diameter_study_wiring(monkeypatch, alder):
    case = alder
    spies = {name: Spy(monkeypatch, mod, name) for mod, name in (
        (pipewall, "wall_along_route"), (pipewall, "vacuum_check"),
        (economics, "pipe_cost_breakdown"), (diameter, "annual_cost_model"),
        (diameter, "sensitivity_grid"), (diameter, "one_at_a_time"),
        (diameter, "economic_velocity_diameter"), (surge, "allievi_rise_capped"),
        (energy, "mean_annual_weights"), (energy, "net_head"),
        (gradeline, "crown_pressure_head"), (transients, "series_pipes"),
        (transients, "simulate_converged"), (transients, "envelope_at"),
        (turbines, "head_datum"))}
    r = run_case(case, samples=0)
    for name, spy in spies.items():
        assert spy.calls, f"{name} was never called"
    props = water.water_properties(case.temperature, case.altitude)
    w = case.wall
    # the wall: the case's joint efficiency, corrosion allowance and handling rule, full
    # vacuum at the site's own air pressure, the case's buckling safety factor
    for _, kw in spies["wall_along_route"].calls:
        assert kw["joint_efficiency"] == w["joint_efficiency"]
        assert kw["corrosion_allowance"] == w["corrosion_allowance"]
        assert kw["handling_rule"] == w["handling_rule"]
        assert kw["external_pressure"] == pytest.approx(props.atmospheric_pressure)
        assert kw["buckling_safety"] == w["buckling_safety"]
    steel_e = sizing.wall_material(case).elastic_modulus
    calls = spies["vacuum_check"].calls
    assert any(args[2] == steel_e for args, _ in calls)
    for args, kw in calls:
        assert kw["safety_factor"] == w["buckling_safety"]
        # steel keeps the case's corrosion allowance; PE and ductile iron carry none
        assert kw.get("corrosion_allowance", 0.0) == (
            w["corrosion_allowance"] if args[2] == steel_e else 0.0)
    # the costs: the case's steel price and factors; the other materials by the metre,
    # with the case's installation, civil and contingency terms
    c = case.costs
    calls = spies["pipe_cost_breakdown"].calls
    assert any("cost_per_tonne" in kw for _, kw in calls)
    assert any("cost_per_metre" in kw for _, kw in calls)
    for _, kw in calls:
        assert kw["contingency_factor"] == c["contingency"]
        assert kw["installation_factor"] == c["installation_factor"]
        if "cost_per_tonne" in kw:
            assert kw["cost_per_tonne"] in (pytest.approx(c["steel_price"]),
                                            pytest.approx(0.8 * c["steel_price"]),
                                            pytest.approx(1.2 * c["steel_price"]))
            assert kw["fabrication_factor"] == c["fabrication_factor"]
        else:
            assert "fabrication_factor" not in kw and np.all(kw["cost_per_metre"] > 0)
    e = case.economics
    kws = [kw for _, kw in spies["annual_cost_model"].calls]
    assert any(kw["energy_price"] == pytest.approx(e["energy_price"] / 3.6e6)
               and kw["discount_rate"] == e["discount_rate"] for kw in kws)
    assert all(kw["economic_life"] == e["life"] for kw in kws)
    # one year: the energy stage's basis, from the record's own index
    (args, _), *_ = spies["mean_annual_weights"].calls
    assert len(args[0]) == len(case.flow_record)
    # the recommended candidate's annualized cost is the cost model's, with real plates
    assert r.diameter_candidates["annualized cost [currency/year]"].notna().all()


def test_steady_and_energy_wiring(monkeypatch, alder):
    case = alder
    crown = Spy(monkeypatch, gradeline, "crown_pressure_head")
    net = Spy(monkeypatch, energy, "net_head")
    r = run_case(case, samples=0)
    drawdown = case.headwater - case.headwater_min
    assert any(np.all(np.asarray(kw.get("drawdown", args[2] if len(args) > 2 else 0.0))
                      == drawdown) for args, kw in crown.calls)
    # the net head of the Summary is energy.net_head of the stage's own numbers
    h = r.headline
    assert any(float(np.asarray(a[0])) == pytest.approx(h.gross_head)
               and float(np.asarray(a[1])) == pytest.approx(h.total_loss)
               for a, _ in net.calls if len(a) >= 2 and np.ndim(a[0]) == 0)
