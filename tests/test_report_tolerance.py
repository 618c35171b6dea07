"""The tolerance section of the HTML review."""

from __future__ import annotations

import pytest

from benchcheck import solve_text, tolspec
from benchcheck.config import Config
from benchcheck.findings import Bench
from layouts_util import two_mirror

pytest.importorskip("matplotlib")

from benchcheck.report_tolerance import tolerance_section  # noqa: E402


def bench(tolerances) -> Bench:
    sol = solve_text(two_mirror(None, 200.0, 199.9))
    return Bench(sol.layout, sol, Config().limits, tolerances=tolerances)


def test_section_has_yield_histogram_chart_and_alignment_table():
    html = tolerance_section(bench(tolspec.Tolerances(source=tolspec.FROM_CONFIG)))
    assert html.startswith('<section id="tolerances">') and html.endswith("</section>")
    assert "Wilson" in html and "stable with |m|" in html
    assert html.count("<svg") == 2                      # radius histogram, sensitivity chart
    assert "tilted mirror" in html and "µm per µrad" in html


def test_section_says_nothing_was_simulated_without_tolerances():
    html = tolerance_section(bench(tolspec.Tolerances()))
    assert "nothing simulated" in html and "<svg" not in html
