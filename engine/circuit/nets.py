"""Named DC nets (the README's File formats, [nets.NAME]): fixed and ratiometric references.

    [nets.mid]
    value = "2.5 0.5% 20ppm"     # fixed: value, tolerance, tempco
    [nets.half_supply]
    rail = "converter"           # ratiometric: fraction x the rail's positive voltage
    fraction = "0.5 0.1%"

A voltage field written `{ net = "NAME" }` reads as a `NetValue` (model.py). A net has one value
at each corner or draw, shared by every stage that uses it; a ratiometric net moves with the very
rail value that sets that rail's swing windows there. Its ends:

    fixed:        value (1 -/+ tol) (1 -/+ tempco dT)
    ratiometric:  fraction (1 -/+ tol_f) (1 -/+ tempco_f dT)  x  positive (1 -/+ tol_rail)

The corners method walks the chain once per joint corner of these shared ends (`joint_plans`);
rss and Monte Carlo give each net (and the rail it follows) one column shared by every stage.
"""

from __future__ import annotations

import itertools
from collections.abc import Mapping
from dataclasses import replace

from railroom.engine.circuit.model import Chain, Net, NetValue, Rails
from railroom.engine.formats.values import Quantity, ValueTextError, has_control, parse_quantity

NET_KEYS = ("value", "rail", "fraction")
MAX_NETS = 64
# joint corners of the shared values walked one by one (2^8 = 256 walks); past this the nets
# are taken stage by stage, each at every end of its own (an outside bound, with a caution)
MAX_SHARED_BITS = 8
MAX_NAME = 200


def read_nets(raw, r, rails: Mapping[str, Rails]) -> dict[str, Net | None]:
    """The [nets] tables; a net that cannot be read maps to None (its problem is recorded)."""
    if raw is None:
        return {}
    if not isinstance(raw, dict):
        r.problem("nets", "expected tables such as [nets.mid] with value, or rail and fraction")
        return {}
    if len(raw) > MAX_NETS:
        r.problem("nets", f"{len(raw):,} nets; a chain takes at most {MAX_NETS}")
        return {}
    nets: dict[str, Net | None] = {}
    for name, t in raw.items():
        nets[name] = _read_net(name, t, r, rails)
    return nets


def _read_net(name: str, t, r, rails: Mapping[str, Rails]) -> Net | None:
    w = f"nets.{name}"
    if has_control(name) or len(name) > MAX_NAME:
        r.problem(w, f"expected a net name of at most {MAX_NAME} characters, without control characters")
        return None
    if not isinstance(t, dict):
        r.problem(w, "expected a table with value, or rail and fraction")
        return None
    before = len(r.problems)
    r.unknown_keys(t, w, NET_KEYS, f"[{w}]")
    if "value" in t and ("rail" in t or "fraction" in t):
        r.problem(w, "a net is fixed (value) or ratiometric (rail and fraction), not both")
        return None
    if "value" in t:
        value = r.quantity(t, w, "value", "voltage")
        return Net(name, value=value, line=r.line(w)) if value and len(r.problems) == before else None
    if "rail" not in t:
        r.problem(w, 'missing; expected value = "2.5 0.5%", or rail = "NAME" with fraction = "0.5 0.1%"')
        return None
    rail = r.text_field(t, w, "rail")
    if rail is not None and rail not in rails:
        known = ", ".join(rails) or "none"
        r.problem(f"{w}.rail", f"no rails named {rail!r}; expected one of {known}")
        rail = None
    fraction = read_fraction(t, w, r)
    if rail is None or fraction is None or len(r.problems) != before:
        return None
    return Net(name, rail=rail, fraction=fraction, line=r.line(w))


def read_fraction(t: dict, w: str, r) -> Quantity | None:
    """A divider's ratio: "0.5", "50%", "0.5 0.1%" or "0.5 0.1% 10ppm", above 0 and at most 1."""
    raw = t.get("fraction")
    if raw is None:
        r.problem(f"{w}.fraction", 'missing; expected a divider\'s ratio such as "0.5 0.1%"')
        return None
    try:
        return parse_fraction(raw)
    except ValueTextError as err:
        r.problem(f"{w}.fraction", str(err))
        return None


def parse_fraction(raw) -> Quantity:
    """A divider's ratio as written ("0.5 0.1%"); raises ValueTextError saying what was expected."""
    try:
        if isinstance(raw, str) and len(raw.split(None, 1)) == 2:
            head, tail = raw.split(None, 1)
            extras = parse_quantity(f"1 {tail}", "voltage")
            q = Quantity(parse_quantity(head, "fraction").value, extras.tolerance, extras.tempco)
        else:
            q = parse_quantity(raw, "fraction")
    except ValueTextError:
        raise ValueTextError(
            'a divider\'s ratio such as "0.5 0.1%" (above 0, at most 1, with its tolerance)', repr(raw)
        ) from None
    if not 0 < q.value <= 1:
        raise ValueTextError("a divider's ratio above 0 and at most 1", f"{q.value:g}")
    return q


def net_value(net: Net, rails: Mapping[str, Rails]) -> NetValue:
    """What `{ net = NAME }` reads as: the nominal value with a tolerance covering every end."""
    if net.value is not None:
        q = net.value
        return NetValue(q.value, q.tolerance, q.tempco, net=net.name)
    fraction, rail = net.fraction, rails[net.rail or ""]
    assert fraction is not None
    tol_f = fraction.tolerance or 0.0
    # (1 + tf)(1 + tr) - 1 covers the upper end and, being larger than 1 - (1 - tf)(1 - tr),
    # the lower one too
    tolerance = (1 + tol_f) * (1 + rail.tolerance) - 1
    return NetValue(fraction.value * rail.positive, tolerance or None, fraction.tempco, net=net.name)


def _ends(q: Quantity, rise: float) -> tuple[float, float]:
    tol, drift = q.tolerance or 0.0, (q.tempco or 0.0) * rise
    ends = (q.value * (1 - tol) * (1 - drift), q.value * (1 + tol) * (1 + drift))
    return (min(ends), max(ends))


def net_span(chain: Chain, net: Net) -> tuple[float, float]:
    """The net's smallest and largest value over its tolerance, tempco and (ratiometric) rail."""
    rise = chain.conditions.worst_temperature_rise
    if net.value is not None:
        return _ends(net.value, rise)
    assert net.fraction is not None
    low, high = _ends(net.fraction, rise)
    pos = chain.rails[net.rail or ""].positive_range
    return (low * pos[0], high * pos[1])


def used_nets(plans) -> list[str]:
    """Names of the nets some stage reads, in file order of first use."""
    found: list[str] = []
    for plan in plans:
        for q in plan.quantities.values():
            if isinstance(q, NetValue) and q.net not in found:
                found.append(q.net)
    return found


def shared_ends(chain: Chain, plans) -> list[tuple[str, tuple[float, float]]]:
    """The shared values that vary, each with its two ends: ("net:NAME", fraction or value
    ends) and ("rail:NAME", positive ends) for every rail a ratiometric net follows."""
    rise = chain.conditions.worst_temperature_rise
    found: list[tuple[str, tuple[float, float]]] = []
    rails: list[str] = []
    for name in used_nets(plans):
        net = chain.nets[name]
        q = net.value if net.value is not None else net.fraction
        assert q is not None
        ends = _ends(q, rise)
        if ends[0] != ends[1]:
            found.append((f"net:{name}", ends))
        if net.rail is not None and net.rail not in rails:
            rails.append(net.rail)
    for rail in rails:
        ends = chain.rails[rail].positive_range
        if ends[0] != ends[1]:
            found.append((f"rail:{rail}", ends))
    return found


def joint_plans(chain: Chain, plans) -> list[list] | None:
    """One list of plans per joint corner of the shared values: every net pinned to its value
    there and every rail a ratiometric net follows pinned to its end there (its windows too).
    None when no stage reads a net; an empty list when the joint corners are too many."""
    if not used_nets(plans):
        return None
    ends = shared_ends(chain, plans)
    if len(ends) > MAX_SHARED_BITS:
        return []
    variants = []
    for corner in itertools.product((0, 1), repeat=len(ends)):
        chosen = {key: pair[bit] for (key, pair), bit in zip(ends, corner)}
        variants.append(pinned_plans(chain, plans, chosen))
    return variants


def pinned_plans(chain: Chain, plans, chosen: dict[str, float]) -> list:
    """The plans with each net read at one value and the followed rails held at one end."""
    rails = {}
    for name in used_nets(plans):
        net = chain.nets[name]
        if net.rail is not None:
            rail = chain.rails[net.rail]
            rails[net.rail] = replace(rail, pinned=chosen.get(f"rail:{net.rail}", rail.positive))
    values = {}
    for name in used_nets(plans):
        net = chain.nets[name]
        if net.value is not None:
            values[name] = chosen.get(f"net:{name}", net.value.value)
        else:
            assert net.fraction is not None and net.rail is not None
            fraction = chosen.get(f"net:{name}", net.fraction.value)
            values[name] = fraction * rails[net.rail].positive_range[0]
    pinned = []
    for plan in plans:
        quantities = {
            key: Quantity(values[q.net]) if isinstance(q, NetValue) else q
            for key, q in plan.quantities.items()
        }
        pinned.append(replace(plan, quantities=quantities, rails=rails.get(plan.rails.name, plan.rails)))
    return pinned


def net_cautions(chain: Chain, plans) -> list[str]:
    """Said when the joint corners are too many to walk one by one (joint_plans)."""
    if not used_nets(plans):
        return []
    count = len(shared_ends(chain, plans))
    if count <= MAX_SHARED_BITS:
        return []
    return [
        f"{count} shared values vary (nets and the rails ratiometric nets follow); the worst case "
        f"walks the joint corners of at most {MAX_SHARED_BITS}, so each stage takes each net at "
        "every end of its own: an outside bound, the margins may be smaller than the true ones"
    ]
