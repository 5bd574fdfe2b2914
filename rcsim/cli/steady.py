"""``rcsim steady SCENARIO``: steady-state temperatures and heat flows."""

from __future__ import annotations

import click

from .format import CAUTION, format_time
from .guard import guard
from .options import load_scenario, scenario_argument


@click.command()
@scenario_argument
@click.option("--between", nargs=2, metavar="A B", help="Also print the equivalent resistance "
              "between two nodes or boundaries.")
@click.option("--at", "at", default="0 s", show_default=True,
              help="Time at which boundaries and sources are taken, e.g. '15 h'.")
@guard
def steady(scenario, between, at):
    """Steady-state temperatures and heat flows of SCENARIO."""
    from ..steady import link_resistances
    from ..summaries import area_conductance
    from ..units import to_si

    sc = load_scenario(scenario)
    net = sc.network
    at_seconds = to_si(at, "time", "--at")
    res = sc.steady(at=at_seconds)     # errors name the scenario file
    r_between = net.equivalent_resistance(*between, at=at_seconds) if between else None
    resistances = link_resistances(net, res, at=at_seconds)
    secant = False
    width = max([len(n) for n in list(res.temperatures.index) + list(res.heat_flows.index)] + [8])
    click.echo(f"{sc.name}: steady state ({res.solver}), boundaries and sources at t = "
               f"{format_time(at_seconds)}")
    click.echo("")
    click.echo(f"  {'node':<{width}}  temperature [degC]")
    for name, t in res.temperatures.items():
        click.echo(f"  {name:<{width}}  {t:12.4f}")
    for name, t in res.boundary_temperatures.items():
        click.echo(f"  {name:<{width}}  {t:12.4f}   (boundary)")
    click.echo("")
    click.echo(f"  {'link':<{width}}  heat flow [W]   R [K/W]  U or G/A [W/(m^2*K)]")
    for name, q in res.heat_flows.items():
        link = net.links[name]
        found = area_conductance(link)
        u_text = f"{found[0]:>3} {found[1]:<12.4g}" if found else f"{'-':>3} {'':<12}"
        r = resistances[name]
        if link.is_nonlinear:   # the secant value of this state, marked
            secant = True
            r_text = f"{r:9.5g}*"
        else:
            r_text = f"{r:10.5g}"
        click.echo(f"  {name:<{width}}  {q:12.4f}  {r_text}  {u_text}"
                   f"   ({link.a} -> {link.b})")
    if between:
        click.echo("")
        click.echo(f"  equivalent resistance {between[0]} - {between[1]}: {r_between:.6g} K/W"
                   + (" (nonlinear links at their secant value*)" if secant else ""))
    click.echo("")
    click.echo("  U: a construction (plane layers) between the link's two points; G/A: the "
               "conductance per area\n  of a film, pad or other link with one area")
    if secant:
        click.echo("  *: nonlinear link (radiation, film correlation): its secant resistance "
                   "dT/q in this steady state\n     (the tangent where no temperature "
                   "difference drives it)")
    click.echo(CAUTION)
