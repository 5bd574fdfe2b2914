import os

import matplotlib
import pytest

matplotlib.use("Agg")

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
SCENARIOS = os.path.join(ROOT, "scenarios")


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
