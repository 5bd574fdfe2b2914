"""The network picture: what it shows, how it is laid out, the files it writes."""

import itertools
import math
import os

import numpy as np
import pytest

import rcsim
from rcsim import drawing
from rcsim.errors import InputError

HERE = os.path.dirname(__file__)
SCENARIOS = os.path.join(HERE, "..", "scenarios")


def _ladder(n):
    net = rcsim.Network()
    net.add_boundary("outside", temperature=20.0)
    prev = "outside"
    for i in range(1, n + 1):
        net.add_node(f"n{i}", capacity=1000.0 * i, initial=20.0)
        net.add_link(prev, f"n{i}", resistance=0.5 * i, name=f"r{i}")
        prev = f"n{i}"
    return net


def test_a_ladder_reads_as_a_ladder():
    # a chain boundary - n1 - ... - n6: one point per layer, in a straight evenly spaced line
    picture = drawing.draw_network(_ladder(6))
    pos = picture.positions
    xs = {round(pos[p][0], 9) for p in pos}
    assert xs == {0.0}
    ys = [pos[("boundary", "outside")][1]] + [pos[("node", f"n{i}")][1] for i in range(1, 7)]
    assert np.allclose(np.diff(ys), -drawing._DY)
    right = drawing.draw_network(_ladder(6), orientation="right").positions
    assert np.allclose(np.diff([right[("node", f"n{i}")][0] for i in range(1, 7)]), drawing._DX)


def test_the_graph_carries_capacities_resistances_and_profiles():
    sc = rcsim.load(os.path.join(SCENARIOS, "cold-box.toml"))
    g = drawing.network_graph(sc)
    kinds = [d["kind"] for _, d in g.nodes(data=True)]
    assert kinds.count("node") == 6 and kinds.count("boundary") == 1
    assert g.number_of_edges() == len(sc.network.links) == 10   # the ten [links.*] of the file
    foam = [d for _, _, d in g.edges(data=True) if d["link"] == "foam"][0]
    # plane layers in series, R = L/(kA) (Incropera et al., 6th ed., eq. 3.6): 50 mm foam at k 0.025 W/(m K)
    # (the bundled table's polyurethane foam) over 1.05 m^2, 4 mm carton at 0.065 over 1.2 m^2
    assert foam["resistance"] == pytest.approx(0.05 / (0.025 * 1.05) + 0.004 / (0.065 * 1.2),
                                               rel=1e-12)
    assert foam["kinds"] == "conduction + conduction"
    film = [d for _, _, d in g.edges(data=True) if d["link"] == "outer_film"][0]
    assert film["nonlinear"] and math.isnan(film["resistance"])
    payload = g.nodes[("node", "payload")]
    assert "21.6 kJ/K" in payload["detail"]          # 6 kg x 3.6 kJ/(kg K), by hand
    assert "sine" in g.nodes[("boundary", "bay")]["detail"]


def test_sliced_layers_are_one_block_unless_asked():
    sc = rcsim.load(os.path.join(SCENARIOS, "room-day.toml"))
    wall = sc.network.links["wall"]
    collapsed = drawing.network_graph(sc)
    assert ("layer", "wall") in collapsed
    assert not [p for p in collapsed if p[0] == "internal"]
    expanded = drawing.network_graph(sc, expand_layers=True)
    inner = [p for p in expanded if p[0] == "internal"]
    assert [p[1] for p in inner] == [f"wall.{i}" for i in range(1, 15)]    # 10 + 4 slices
    # the slices share the layer's capacity, and the steps of the ladder add up to the link's
    # series resistance (each slice split in two halves around its node)
    assert sum(expanded.nodes[p]["capacity"] for p in inner) == pytest.approx(wall.capacity,
                                                                             rel=1e-12)
    steps = [d["resistance"] for _, _, d in expanded.edges(data=True) if d["link"] == "wall"]
    assert len(steps) == 15 and sum(steps) == pytest.approx(wall.resistance, rel=1e-12)


def test_a_thirty_node_network_keeps_its_labels_apart():
    # three ladders of ten nodes from three boundaries, rungs between them at every depth
    net = rcsim.Network()
    for side in "abc":
        net.add_boundary(f"out_{side}", temperature=20.0)
        prev = f"out_{side}"
        for i in range(10):
            net.add_node(f"{side}{i}", capacity=500.0, initial=20.0)
            net.add_link(prev, f"{side}{i}", resistance=1.0, name=f"{side}_r{i}")
            prev = f"{side}{i}"
    for i in range(10):
        net.add_link(f"a{i}", f"b{i}", resistance=2.0, name=f"ab{i}")
        net.add_link(f"b{i}", f"c{i}", resistance=2.0, name=f"bc{i}")
    picture = drawing.draw_network(net)
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    renderer = FigureCanvasAgg(picture.figure).get_renderer()
    ax = picture.figure.axes[0]
    names = {f"{s}{i}" for s in "abc" for i in range(10)} | {"out_a", "out_b", "out_c"}
    boxes = [t.get_window_extent(renderer) for t in ax.texts if t.get_text() in names]
    assert len(boxes) == 33
    for a, b in itertools.combinations(boxes, 2):
        assert not a.overlaps(b)
    # every point of a ladder one layer further than the one before
    ys = [picture.positions[("node", f"b{i}")][1] for i in range(10)]
    assert np.all(np.diff(ys) < 0)
    # and each depth a row: a rung's middle point, linked to two points of its row, stays in it
    for i in range(10):
        assert len({picture.positions[("node", f"{s}{i}")][1] for s in "abc"}) == 1


def test_files_in_each_format_and_bad_names(tmp_path):
    sc = rcsim.load(os.path.join(SCENARIOS, "enclosure.toml"))
    for fmt in ("svg", "png", "pdf"):
        path = drawing.save_network_picture(sc, tmp_path / f"net.{fmt}")
        assert os.path.getsize(path) > 1000
    from PIL import Image

    with Image.open(tmp_path / "net.png") as im:
        assert im.size[0] > 300 and im.size[1] > 300
    svg = open(tmp_path / "net.svg").read()
    assert svg.lstrip().startswith("<?xml") and "<svg" in svg
    with pytest.raises(InputError, match="use .svg, .png or .pdf"):
        drawing.save_network_picture(sc, tmp_path / "net.jpg")
    assert sorted(os.listdir(tmp_path)) == ["net.pdf", "net.png", "net.svg"]
    with pytest.raises(InputError, match="orientation"):
        drawing.draw_network(sc, orientation="up")


def _drawn_boxes(picture):
    """The texts of a picture with their boxes as matplotlib's Agg renderer measures them (an
    independent measure: not the sizes the placement itself computed), and the drawn lines."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    renderer = FigureCanvasAgg(picture.figure).get_renderer()
    ax = picture.figure.axes[0]
    texts = [t for t in ax.texts if t.get_text()]
    boxes = [t.get_window_extent(renderer) for t in texts]
    paths = [ln.get_transform().transform_path(ln.get_path()) for ln in ax.lines]
    return texts, boxes, paths


def _overlapping(texts, boxes):
    return [(texts[i].get_text().split("\n")[0], texts[j].get_text().split("\n")[0])
            for i, j in itertools.combinations(range(len(texts)), 2)
            if boxes[i].overlaps(boxes[j])]


@pytest.mark.parametrize("orientation", ["down", "right"])
def test_the_shipper_labels_keep_apart_and_off_the_lines(orientation):
    # the bundled shipper: two radiation links and crossing links between the packs, payload and
    # box air, where labels used to sit on each other and on the crossing lines
    sc = rcsim.load(os.path.join(SCENARIOS, "cold-box.toml"))
    picture = drawing.draw_network(sc, orientation=orientation)
    texts, boxes, paths = _drawn_boxes(picture)
    # every point's name and detail and every link's label is there: 7 points x 2 + 10 links
    assert len(texts) == 24
    assert _overlapping(texts, boxes) == []
    if orientation == "down":
        # and no drawn line (link, zig-zag, capacitor) runs under any text (matplotlib's own
        # path-box intersection on the rendered geometry)
        crossed = [t.get_text().split("\n")[0] for t, b in zip(texts, boxes)
                   if any(p.intersects_bbox(b, filled=False) for p in paths)]
        assert crossed == []


@pytest.mark.parametrize("name", sorted(n for n in os.listdir(SCENARIOS) if n.endswith(".toml")))
def test_no_two_labels_overlap_on_any_bundled_scenario(name):
    sc = rcsim.load(os.path.join(SCENARIOS, name))
    texts, boxes, _ = _drawn_boxes(drawing.draw_network(sc))
    assert texts and _overlapping(texts, boxes) == []


def test_a_link_through_another_point_is_bowed_round_it():
    # a - b - c in a row, and a link from a straight to c: drawn straight it would pass through b
    net = rcsim.Network()
    net.add_boundary("out", temperature=20.0)
    for name in "abc":
        net.add_node(name, capacity=1000.0, initial=20.0)
    net.add_link("out", "a", resistance=1.0)
    net.add_link("out", "b", resistance=1.0)
    net.add_link("out", "c", resistance=1.0)
    net.add_link("a", "b", resistance=1.0)
    net.add_link("b", "c", resistance=1.0)
    net.add_link("a", "c", resistance=1.0, name="long")
    picture = drawing.draw_network(net)
    b = np.array(picture.positions[("node", "b")])
    ax = picture.figure.axes[0]
    # the points of every drawn line in inches (data units); the long link is the only one from
    # a to c, so the line starting at a and ending at c
    a, c = (np.array(picture.positions[("node", n)]) for n in "ac")
    long = [ln.get_xydata() for ln in ax.lines
            if len(ln.get_xydata()) > 10
            and {tuple(np.round(ln.get_xydata()[0], 6)), tuple(np.round(ln.get_xydata()[-1], 6))}
            == {tuple(np.round(a, 6)), tuple(np.round(c, 6))}]
    assert len(long) == 1
    # it keeps clear of b's circle (radius 0.15 in) by more than its radius
    assert np.min(np.hypot(*(long[0] - b).T)) > 0.3


def _cabinet():
    return rcsim.load(os.path.join(SCENARIOS, "outdoor-cabinet.toml"))


@pytest.mark.parametrize("orientation", ["down", "right"])
def test_a_point_linked_along_its_row_moves_one_layer_in(orientation):
    # the bundled cabinet, layers by hand from its links: the four panels one link from the
    # outdoor air; the air inside is one link from it too (vents), but linked to all four
    # panels it sits a layer further in, so those links run between layers, not along a row;
    # the battery, linked only to the air inside, one further
    picture = drawing.draw_network(_cabinet(), orientation=orientation)
    along = 1 if orientation == "down" else 0
    at = {p[1]: round(xy[along], 9) for p, xy in picture.positions.items()}
    rows = [["outdoor", "building", "sky"], ["roof", "front", "east", "west"], ["inside"],
            ["battery"]]
    for row in rows:
        assert len({at[name] for name in row}) == 1, row
    places = [at[row[0]] for row in rows]
    sign = -1 if orientation == "down" else 1
    # between the boundaries and the panels run 13 links: film and sky of the four panels,
    # ground of the three walls (the flat roof sees no ground: view factor (1 - cos 0)/2 = 0),
    # vents and back_and_floor; 13 / 4 points / 2 = 1.625 steps; then one step each
    step = drawing._DY if orientation == "down" else drawing._DX
    assert np.allclose(np.diff(places), sign * step * np.array([1.625, 1.0, 1.0]))
    # no link joins two points of one row
    g = picture.graph
    assert [(a, b) for a, b in g.edges() if at[a[1]] == at[b[1]]] == []


def test_source_arrows_cross_no_link_and_keep_their_whole_text():
    # every source of the bundled scenarios: its arrow (from 0.25 to 0.7 of the way from its
    # node's centre to its tail) keeps 0.05 in from every link drawn; its profile text is all
    # there (the cabinet's sun sources have long ones)
    for name in sorted(n for n in os.listdir(SCENARIOS) if n.endswith(".toml")):
        sc = rcsim.load(os.path.join(SCENARIOS, name))
        picture = drawing.draw_network(sc)
        ax = picture.figure.axes[0]
        links = np.concatenate([ln.get_xydata() for ln in ax.lines if len(ln.get_xydata()) > 10]
                               or [np.zeros((0, 2))])
        from matplotlib.text import Annotation

        arrows = [a for a in ax.texts if isinstance(a, Annotation) and not a.get_text()]
        for node in {s.node for s in sc.network.sources.values()}:
            at = np.array(picture.positions[("node", node)])
            # the arrows into this node: heads 0.16 in from its centre, tails 0.73 in
            into = [a for a in arrows if np.isclose(np.hypot(*(np.array(a.xy) - at)), 0.16)
                    and np.isclose(np.hypot(*(np.array(a.xyann) - at)), 0.73)]
            assert len(into) == sum(s.node == node for s in sc.network.sources.values())
            for arrow in into:
                tail = np.array(arrow.xyann)
                seg = at + np.linspace(0.25, 0.7, 30)[:, None] * (tail - at) / 0.73
                if len(links):
                    assert np.min(np.hypot(*(seg[:, None, :] - links[None, :, :]).T)) > 0.05, \
                        (name, node)
        texts = [t.get_text() for t in ax.texts]
        for s in sc.network.sources.values():
            [label] = [t for t in texts if t.startswith(f"{s.name}\n")]
            assert " ".join(label.split()).replace("- ", "-").endswith(
                " ".join((s.profile.describe() + " (W)").split())[-12:]), (name, s.name)


def test_a_text_too_long_for_its_lines_ends_with_an_ellipsis():
    assert drawing._short("one two three", 26) == "one two three"
    text = drawing._short(" ".join(["word"] * 40), 22, lines=4)
    assert text.count("\n") == 3 and text.endswith("\u2026")
