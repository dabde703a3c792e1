"""Explanations for an infeasible request: which rule blocks, and a relaxation to try."""

from __future__ import annotations

from typing import Final

import numpy as np

from ..errors import InfeasibleError
from .bounds import screen_bounds
from .requirement import SQRT2, bus_demand
from .setup import SearchSetup


def precheck(setup: SearchSetup) -> None:
    """Fast infeasibility: no option at all for a role, or not enough capacitance anywhere."""
    req = setup.req
    for role, opts in (
        ("x_capacitor", setup.xo),
        ("series_resistor", setup.ro),
        ("bleeder", setup.bo),
        ("reservoir", setup.co),
    ):
        if len(opts) == 0:
            raise InfeasibleError(
                f"no catalogue part can serve as {role} under the filters and rules",
                rule=f"{role}.*",
                relaxation="fewer filters (--smd-only/--tht-only/--exclude/--stock-only)",
            )
    if not setup.zo:
        raise InfeasibleError(
            "no Zener in the catalogue", rule="zener.power", relaxation="a catalogue with Zeners"
        )
    avg_a, _ = bus_demand(req)
    need = avg_a * (1 + setup.policy.load_margin)
    best = 0.0
    best_top = ""
    v_single = setup.xo.attrs["value"]
    # singles and the largest pair (two of the largest part) at their most favourable
    values = np.append(v_single, 2 * np.max(v_single)) if len(v_single) else v_single
    for t in setup.topologies:
        vz = min(v for _, v in setup.zo)
        b = screen_bounds(
            req,
            t,
            vz,
            values,
            np.zeros(len(values)),
            np.full(len(values), 1.0),
            np.zeros(len(values)),
            0.0,
            0.0,
        )
        i = float(np.max(b["min_dc_current_a"]))
        if i > best:
            best, best_top = i, t
    if best < need:
        cmax = 2 * float(np.max(setup.xo.attrs["value"]))
        m = req.mains
        vpk = SQRT2 * m.low_v
        f = min(m.frequencies_hz)
        c_need = need / (4 * f * (vpk - min(v for _, v in setup.zo))) / (1 - req.cap_loss) / 0.8
        relax = [
            f"X capacitance of about {c_need * 1e6:.3g} uF, more than any catalogue pair "
            f"({cmax * 1e6:.3g} uF)",
            f"a load of at most {best / (1 + setup.policy.load_margin) * 1e3:.3g} mA",
        ]
        if "half-wave" in setup.topologies and "bridge" not in setup.topologies:
            relax.append("bridge instead of half-wave (twice the current)")
        if len(m.frequencies_hz) > 1:
            relax.append(f"a single mains frequency of {max(m.frequencies_hz):g} Hz")
        raise InfeasibleError(
            f"blocked by rule whole.min_current: the best catalogue set gives about "
            f"{best * 1e3:.3g} mA ({best_top}) against {need * 1e3:.3g} mA needed; relax: "
            + "; or ".join(relax),
            rule="whole.min_current",
            relaxation=relax[0],
        )


HINTS: Final[dict[str, str]] = {
    "whole.min_current": "more X capacitance, a lower load, bridge instead of half-wave, "
    "or a single mains frequency",
    "series_r.power": "a higher-power series resistor family or a lower ambient",
    "series_r.switch_on_energy": "a pulse-rated series resistor family (metal oxide, wirewound)",
    "series_r.switch_on_voltage": "a series resistor family with a higher limiting voltage",
    "x_cap.dvdt_switch_on": "a larger series resistance or an X capacitor with a higher dV/dt",
    "zener.power": "a higher Zener power class (or two Zeners in series), a lower ambient, "
    "or a single mains frequency",
    "rectifier.ifsm": "a rectifier with a higher IFSM or a larger series resistance",
    "whole.burst_holdup": "a larger reservoir, a shorter burst, or a lower burst current",
    "whole.standby_power": "a lower load (less X capacitance) or a lower Zener voltage",
    "bleeder.discharge": "a bleeder family rated for more power/voltage (split in 3), or "
    "less X capacitance",
    "fuse.opens_on_short": "a slower fuse (more I^2t) or a fusible series resistor",
}


def infeasible_error(setup: SearchSetup, stats: dict, verified: int = 0) -> InfeasibleError:
    """The blocking rule: among points that pass the X/R rules, the completion rule that fails
    most often; otherwise the X/R rule that fails most often, with how far it misses."""
    comp = stats.get("completion", {})
    blk = stats.get("blocking", {})
    if verified:
        fails = stats.get("exact_fail", {})
        limited = (
            " (search limited: the verification cap was reached, so a passing set may exist)"
            if stats.get("verify_limit")
            else ""
        )
        if fails:
            rid = max(fails.items(), key=lambda kv: kv[1])[0]
            hint = HINTS.get(rid, "a lower surge level or a looser --policy")
            return InfeasibleError(
                f"blocked by rule {rid}: the {verified} candidates the screen let through all fail "
                f"the exact check at some corner ({rid} most often, {fails[rid]} times)"
                f"{limited}; relax: {hint}",
                rule=rid,
                relaxation=hint,
            )
        return InfeasibleError(
            f"no design passes every rule at every corner: the {verified} candidates the screen "
            "let through all fail the exact check; relax: a lower surge level or a looser "
            "--policy",
            rule="(exact check)",
            relaxation="a lower surge level or a looser policy",
        )
    if comp:
        rid = max(comp.items(), key=lambda kv: kv[1])[0]
        return InfeasibleError(
            f"blocked by rule {rid}: no catalogue part completes any otherwise feasible set; "
            f"relax: {HINTS.get(rid, 'a looser policy')}",
            rule=rid,
            relaxation=HINTS.get(rid),
        )
    if not blk:
        return InfeasibleError(
            "no part set passes the rules", rule="(unknown)", relaxation="a looser policy"
        )
    rid, d = max(blk.items(), key=lambda kv: kv[1]["count"])
    miss = 1.0 / max(d["best_ratio"], 1e-12) - 1.0
    return InfeasibleError(
        f"blocked by rule {rid}: the closest candidate misses its limit by {miss:.0%}; relax: "
        f"{HINTS.get(rid, 'a looser policy')}",
        rule=rid,
        relaxation=HINTS.get(rid),
    )
