"""Explanations for an infeasible request: which rule blocks, and a relaxation to try."""

from __future__ import annotations

import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace
from typing import Any, Final

import numpy as np

from ..errors import InfeasibleError
from ..units import format_value
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


# ---------------------------------------------------------------------------------------------
# relaxations that are checked by running the search again

#: rules that a lower surge level relaxes (the surge stresses scale with the level)
_SURGE_RULES: Final[frozenset[str]] = frozenset(
    {"x_cap.dvdt_surge", "x_cap.impulse", "series_r.surge_energy", "series_r.surge_voltage"}
)
#: steps of the bisection on one knob (each a full search)
_BISECT_STEPS: Final[int] = 6


@dataclass(frozen=True)
class Relaxation:
    """One knob of the request that can relax a rule, and how to say it."""

    rule: str
    name: str
    #: the request (and policy) at knob position t in [0, 1]: 0 = as asked, 1 = the extreme
    apply: Callable[[float], tuple[Any, Any]]
    #: the knob's value at position t, as the user would write it
    text: Callable[[float], str]


def _load_text(load_a: float) -> str:
    text = format_value(load_a, "A")
    return f"a load of at most {text} (--load {text.replace(' ', '')})"


def _relaxations(req: Any, policy: Any, rule: str) -> list[Relaxation]:
    out: list[Relaxation] = []
    if rule == "whole.min_current" or rule.startswith("zener") or rule == "x_capacitor.*":
        if rule == "whole.min_current":
            # geometric steps: the load a catalogue carries can be orders of magnitude lower
            def load_at(t: float) -> float:
                return req.load_a * 0.01**t

            out.append(
                Relaxation(
                    rule,
                    "load",
                    lambda t: (replace(req, load_a=load_at(t)), policy),
                    lambda t: _load_text(load_at(t)),
                )
            )
        if req.topology == "half-wave":
            out.append(
                Relaxation(
                    rule,
                    "topology",
                    lambda t: (replace(req, topology="bridge"), policy),
                    lambda t: "a bridge instead of half-wave (--topology bridge)",
                )
            )
        freqs = tuple(req.mains.frequencies_hz)
        if len(freqs) > 1:
            keep = max(freqs) if rule == "whole.min_current" else min(freqs)
            out.append(
                Relaxation(
                    rule,
                    "frequency",
                    lambda t: (
                        replace(req, mains=replace(req.mains, frequencies_hz=(keep,))),
                        policy,
                    ),
                    lambda t: f"a single mains frequency of {keep:g} Hz (--freq {keep:g})",
                )
            )
    if rule in _SURGE_RULES and req.conditions.surge_v > 0:
        level = float(req.conditions.surge_v)
        out.append(
            Relaxation(
                rule,
                "surge",
                lambda t: (
                    replace(req, conditions=replace(req.conditions, surge_v=level * (1 - t))),
                    policy,
                ),
                lambda t: (
                    f"a surge level of at most {level * (1 - t):.0f} V "
                    f"(--surge {level * (1 - t):.0f})"
                ),
            )
        )
    if rule == "whole.standby_power" and policy.standby_limit_w is not None:
        lim = float(policy.standby_limit_w)
        top = max(4 * lim, 2.0)
        out.append(
            Relaxation(
                rule,
                "standby",
                lambda t: (req, replace(policy, standby_limit_w=lim + t * (top - lim))),
                lambda t: (
                    f"a no-load power limit of {lim + t * (top - lim):.2f} W "
                    f"(--standby-limit {lim + t * (top - lim):.2f}) if the product's class "
                    "allows it (EU 2023/826), or none at all for a product without a "
                    "standby mode (leave out --standby-limit and --product-class)"
                ),
            )
        )
    if (
        rule.startswith(("zener", "series_r.power", "bleeder.power"))
        and req.conditions.ambient_c > 25
    ):
        amb = float(req.conditions.ambient_c)
        out.append(
            Relaxation(
                rule,
                "ambient",
                lambda t: (
                    replace(
                        req, conditions=replace(req.conditions, ambient_c=amb - t * (amb - 25))
                    ),
                    policy,
                ),
                lambda t: (
                    f"an ambient of at most {amb - t * (amb - 25):.0f} C "
                    f"(--ambient {amb - t * (amb - 25):.0f})"
                ),
            )
        )
    return out


def checked_relaxation(
    run_search: Callable[[Any, Any], bool],
    req: Any,
    policy: Any,
    rules: Sequence[str],
    deadline: float,
) -> tuple[str, str] | None:
    """The first of ``rules`` (most blamed first) with a relaxation that, applied, makes the
    request feasible: (rule, relaxation text), the smallest such change found by bisection on
    the knob; every returned relaxation was itself run and found a design. None when no knob
    helps within the deadline (time.monotonic())."""
    for rule in rules:
        for relax in _relaxations(req, policy, rule):
            if time.monotonic() > deadline:
                return None
            if not run_search(*relax.apply(1.0)):
                continue
            if relax.name in ("topology", "frequency"):
                return rule, relax.text(1.0)
            lo, hi = 0.0, 1.0  # infeasible at lo (as asked), feasible at hi
            for _ in range(_BISECT_STEPS):
                if time.monotonic() > deadline:
                    break
                mid = 0.5 * (lo + hi)
                if run_search(*relax.apply(mid)):
                    hi = mid
                else:
                    lo = mid
            return rule, relax.text(hi)
    return None
