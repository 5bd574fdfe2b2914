import os

import matplotlib
import pytest

matplotlib.use("Agg")

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
SCENARIOS = os.path.join(ROOT, "scenarios")


#: A block in a room with a heater whose power a log's heater column gives: the network of the
#: fitting tests (one node, C and R to fit).
HEATER_BLOCK = """
[nodes.block]
capacity = "1.2 kJ/K"
initial = "10 degC"
[boundaries.room]
temperature = "20 degC"
[links.skin]
between = ["block", "room"]
resistance = "1 K/W"
[sources.heater]
node = "block"
power = "0 W"      # the log's heater column drives it
"""


@pytest.fixture
def write(tmp_path):
    """Write a text file into tmp_path and return its path."""

    def _write(name, text, mode="w"):
        p = tmp_path / name
        if mode == "wb":
            p.write_bytes(text)
        else:
            p.write_text(text, encoding="utf-8")
        return str(p)

    return _write


@pytest.fixture
def cli():
    """Run the rcsim command in-process and return the click result."""
    from click.testing import CliRunner

    from rcsim.cli import main

    def _run(*args):
        runner = CliRunner()
        return runner.invoke(main, [str(a) for a in args], catch_exceptions=True)

    return _run


# -- networks shared by the engine's tests -----------------------------------------------------
def make_single_node(C=8400.0, R=2.5, Ti=5.0, ambient=25.0, power=None):
    """One lumped node x (capacity C [J/K], starting at Ti [degC]) behind a resistance R [K/W]
    (the link 'skin') from a boundary 'amb' at ``ambient``; optionally a source into x."""
    import rcsim

    net = rcsim.Network()
    net.add_node("x", capacity=C, initial=Ti)
    net.add_boundary("amb", temperature=ambient)
    net.add_link("x", "amb", resistance=R, name="skin")
    if power is not None:
        net.add_source("x", power=power)
    return net


def make_heated_box(limits=True):
    """A payload (8.4 kJ/K) in an air node (200 J/K) behind a wall (2.5 K/W) from a daily
    outdoor sine (25 +- 7 degC, peak at 15 h), a 5 W fan heating the air from 1 h on, and a
    2..8 degC band on the payload."""
    import rcsim

    net = rcsim.Network()
    net.add_node("payload", capacity=8400.0, initial=5.0)
    net.add_node("air", capacity=200.0, initial=5.0)
    net.add_boundary("outdoor", temperature=rcsim.Sine(mean=25, amplitude=7, period=86400,
                                                       peak=15 * 3600))
    net.add_link("payload", "air", resistance=0.4, name="film")
    net.add_link("air", "outdoor", resistance=2.5, name="wall")
    net.add_source("air", power=rcsim.Steps([0, 3600], [0.0, 5.0]), name="fan")
    if limits:
        net.add_limit("payload", min=2, max=8)
    return net


def make_slab_wall(slices, h=10.0, k=1.0, L=0.1, rho=2000.0, cp=1000.0, Ti=100.0):
    """A plane wall of thickness 2L in ``slices`` internal nodes (wall.1 ..) between films h
    [W/(m^2 K)] to two boundaries at 0 degC, every slice starting at Ti; returns (network,
    starting temperatures of the slices)."""
    import rcsim

    net = rcsim.Network()
    net.add_boundary("left", temperature=0.0)
    net.add_boundary("right", temperature=0.0)
    net.add_link("left", "right", name="wall", parts=[
        {"convection": {"h": h, "area": 1.0}},
        {"conduction": {"k": k, "thickness": 2 * L, "area": 1.0, "density": rho,
                        "specific_heat": cp, "slices": slices}},
        {"convection": {"h": h, "area": 1.0}},
    ])
    return net, {f"wall.{i + 1}": Ti for i in range(slices)}


@pytest.fixture
def single_node():
    """Factory of :func:`make_single_node` networks."""
    return make_single_node


@pytest.fixture
def heated_box():
    """Factory of :func:`make_heated_box` networks."""
    return make_heated_box


@pytest.fixture
def slab_wall():
    """Factory of :func:`make_slab_wall` networks."""
    return make_slab_wall
