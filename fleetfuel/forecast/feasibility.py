"""Can a spec serve a route? Each check gives a one-line reason when it cannot.

Checks, in order (a failed payload check stops there: the spec cannot be simulated at that load):

1. payload within the legal gross mass: route payload <= ``max_gross_mass_kg - curb_mass_kg``;
2. trace shortfall: the share of driving time the spec falls short of the route's driving
   (speed above its reach, force above its powertrain or adhesion, empty battery) is at most
   ``ForecastConfig.max_shortfall_share``;
3. startability: the spec can move off on the route's steepest sustained grade at the route's
   payload (:func:`fleetfuel.simulate.envelope.performance_envelope`, dry asphalt);
4. gradeability: at some speed of the envelope's table it holds that grade;
5. electric range: the worst shift's battery draw fits in the usable energy less the reserve
   share ``ForecastConfig.electric_reserve_share``.

The envelope figures are model estimates (:data:`fleetfuel.simulate.envelope.CAUTION`).
"""

from __future__ import annotations

from typing import Final

import numpy as np

from fleetfuel.forecast.config import ForecastConfig
from fleetfuel.forecast.energy import RouteEnergy
from fleetfuel.simulate import VehicleSpec
from fleetfuel.simulate.envelope import Envelope

PERCENT: Final = 100.0


def payload_reason(spec: VehicleSpec, payload_kg: float) -> str:
    """Reason the payload is not legal for ``spec`` ("" when it is). [kg]"""
    if payload_kg <= spec.max_payload_kg:
        return ""
    return (f"payload {payload_kg:.0f} kg above the legal maximum of {spec.max_payload_kg:.0f} kg "
            f"(gross mass {spec.body.max_gross_mass_kg:.0f} kg)")


def best_gradeability_pct(envelope: Envelope) -> float:
    """Steepest grade held at any speed of the envelope's table. [%] (NaN: none reachable)"""
    values = [v for v in envelope.gradeability_pct.values() if v is not None and np.isfinite(v)]
    return max(values) if values else float("nan")


def usable_after_reserve_kwh(spec: VehicleSpec, cfg: ForecastConfig) -> float:
    """Usable battery energy less the reserve (NaN for combustion). [kWh]"""
    if spec.battery is None:
        return float("nan")
    return spec.battery.usable_kwh * (1 - cfg.electric_reserve_share)


def check_cell(
    spec: VehicleSpec, energy: RouteEnergy, envelope: Envelope, steepest_grade: float, cfg: ForecastConfig
) -> list[str]:
    """Reasons ``spec`` cannot serve the route (checks 2-5 of the module docstring; empty: feasible).

    Parameters
    ----------
    spec : VehicleSpec
    energy : RouteEnergy
        The spec on the route.
    envelope : Envelope
        The spec's envelope at the route's payload.
    steepest_grade : float
        The route's steepest sustained grade, rise over run (NaN: unknown, not checked). [1]
    cfg : ForecastConfig
    """
    reasons = []
    if energy.shortfall_share > cfg.max_shortfall_share:
        reasons.append(f"cannot follow the route's driving for {energy.shortfall_share * PERCENT:.1f} % of the time "
                       f"(limit {cfg.max_shortfall_share * PERCENT:g} %)")
    if np.isfinite(steepest_grade) and steepest_grade > 0:
        grade_pct = steepest_grade * PERCENT
        if envelope.startability_pct < grade_pct:
            reasons.append(f"cannot start on the steepest sustained grade of {grade_pct:.1f} % "
                           f"(startability {envelope.startability_pct:.1f} %)")
        best = best_gradeability_pct(envelope)
        if not best >= grade_pct:
            reasons.append(f"cannot hold the steepest sustained grade of {grade_pct:.1f} % (gradeability {best:.1f} %)")
    available = usable_after_reserve_kwh(spec, cfg)
    if spec.battery is not None and energy.worst_shift_kwh > available:
        reasons.append(f"worst shift needs {energy.worst_shift_kwh:.0f} kWh, more than the {available:.0f} kWh usable "
                       f"with a {cfg.electric_reserve_share * PERCENT:g} % reserve ({energy.worst_shift_period})")
    return reasons
