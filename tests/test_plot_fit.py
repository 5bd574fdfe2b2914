"""The fit figure, drawn headless (Agg): what is drawn is the fit's data, with units."""

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402
import pytest  # noqa: E402

import rcsim  # noqa: E402
from rcsim.errors import InputError  # noqa: E402
from rcsim.plotting import plot_fit  # noqa: E402

TEXT = """
[nodes.block]
capacity = "2 kJ/K"
initial = "10 degC"
[boundaries.room]
temperature = "20 degC"
[links.skin]
between = ["block", "room"]
resistance = "1 K/W"
"""


@pytest.fixture(scope="module")
def result():
    # Newton cooling toward a logged ambient (closed form for a constant 21 degC)
    t = np.arange(0.0, 6 * 3600.0, 120.0)
    y = 21.0 + (8.0 - 21.0) * np.exp(-t / 3000.0)
    y = y + np.random.default_rng(0).normal(0, 0.05, t.size)
    y[10] = np.nan
    log = pd.DataFrame({"time": t, "probe": y, "room": np.full(t.size, 21.0)})
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return rcsim.fit(rcsim.loads(TEXT), log, ["links.skin.resistance", "nodes.block.initial"],
                         columns={"probe": "block"})


def test_drawn_data_is_the_fit_data(result):
    drawn = plot_fit(result)
    try:
        hours = result.time / 3600.0
        for key, frame in (("measured", result.measured), ("residual", result.residuals)):
            line = drawn.lines[f"{key}:probe"]
            np.testing.assert_array_equal(line.get_xdata(), hours)
            np.testing.assert_array_equal(line.get_ydata(), frame["probe"].to_numpy())
        fitted = drawn.lines["fitted:probe"]
        np.testing.assert_array_equal(fitted.get_xdata(), result.curve.index / 3600.0)
        np.testing.assert_array_equal(fitted.get_ydata(), result.curve["probe"].to_numpy())
        # the curve passes through the fitted values at the log's times
        np.testing.assert_allclose(result.curve["probe"].loc[result.time],
                                   result.fitted["probe"], atol=1e-9)
        np.testing.assert_array_equal(drawn.lines["input:room"].get_ydata(),
                                      result.inputs["room"].to_numpy())
        # residuals are measured - fitted, NaN where the log has no value
        r = drawn.lines["residual:probe"].get_ydata()
        assert np.isnan(r[10])
        top, bottom = drawn.axes
        assert top.get_ylabel() == "temperature [°C]"
        assert bottom.get_ylabel() == "measured − fitted [K]"
        assert bottom.get_xlabel() == "time [h]"
        labels = [t.get_text() for t in top.get_legend().get_texts()]
        assert "probe (block), measured" in labels and "probe (block), fitted" in labels
    finally:
        plt.close(drawn.figure)


def test_given_axes_and_time_unit(result):
    fig, axes = plt.subplots(2, 1)
    try:
        drawn = result.plot(ax=axes, time_unit="min", show_inputs=False)
        assert drawn.figure is fig
        assert not [k for k in drawn.lines if k.startswith("input:")]
        np.testing.assert_allclose(drawn.lines["measured:probe"].get_xdata(), result.time / 60.0)
        assert axes[1].get_xlabel() == "time [min]"
        with pytest.raises(InputError, match="unknown measured column 'room'"):
            plot_fit(result, ax=axes, columns=["room"])
    finally:
        plt.close(fig)
