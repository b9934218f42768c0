"""Charts of sensitivity results (explore.charts) and the shared figure helpers (explore.figures).

Colours are the Okabe & Ito (2008) colour-blind-safe palette: blue #0072B2
for first order, orange #E69F00 for total (Okabe, M., Ito, K., Color
universal design (CUD): how to make figures and presentations that are
friendly to colorblind people).
"""
import matplotlib
import matplotlib.colors
import matplotlib.container
import pandas as pd
import pytest
from numpy.testing import assert_allclose

from hopscape import charts, sensitivity as sens
from hopscape.test_functions import ISHIGAMI_NAMES


def test_ranking_chart_writes_png_in_st_order(tmp_path, ishigami_run):
    table = pd.DataFrame({"parameter": ["a", "b", "c", "d"], "S1": [0.05, 0.6, 0.2, -0.01],
                          "S1_conf": [0.02, 0.05, 0.04, 0.03], "ST": [0.1, 0.7, 0.3, 1.08],
                          "ST_conf": [0.03, 0.06, 0.05, 0.04]})
    path = tmp_path / "ranking.png"
    figure = charts.ranking_chart(table, path, title="Test ranking")
    assert path.stat().st_size > 10_000
    assert path.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    ax = figure.axes[0]
    # labels run top to bottom in descending ST
    assert [label.get_text() for label in ax.get_yticklabels()] == ["d", "b", "c", "a"]
    assert ax.yaxis_inverted()
    # the first bar series is ST: widths in the same order, clipped to 1.05
    bars = [c for c in ax.containers if isinstance(c, matplotlib.container.BarContainer)]
    st_widths = [patch.get_width() for patch in bars[0]]
    assert_allclose(st_widths, [1.05, 0.7, 0.3, 0.1])
    assert ax.get_xlim() == (0.0, 1.05)
    assert ax.get_xlabel() == "Sobol index [-]"
    colours = {matplotlib.colors.to_hex(c[0].get_facecolor()) for c in bars}
    assert colours == {"#0072b2", "#e69f00"}
    legend_texts = [t.get_text() for t in figure.legends[0].get_texts()]
    assert any(t.startswith("S1") for t in legend_texts) and any(t.startswith("ST") for t in legend_texts)
    assert "alone" in ax.get_title() and "interactions" in ax.get_title()
    # and the real Ishigami table, saved as the other formats
    _, _, indices, _ = ishigami_run
    for suffix in (".svg", ".pdf"):
        out = tmp_path / f"ishigami{suffix}"
        figure = charts.ranking_chart(indices, out)
        assert out.stat().st_size > 1000
        assert [t.get_text() for t in figure.axes[0].get_yticklabels()] == ["x1", "x2", "x3"]
    with pytest.raises(ValueError, match=r"path: must be a file ending in .png, .svg, .pdf"):
        charts.ranking_chart(indices, tmp_path / "chart.jpg")
    with pytest.raises(ValueError, match=r"table: lacks the column\(s\) ST_conf"):
        charts.ranking_chart(indices.drop(columns="ST_conf"), tmp_path / "chart.png")


def test_convergence_chart_writes_png_on_a_log2_axis(tmp_path, ishigami_run):
    plan, y, _, _ = ishigami_run
    table = sens.sobol_convergence(plan, y)
    path = tmp_path / "convergence.png"
    figure = charts.convergence_chart(table, path)
    assert path.stat().st_size > 10_000
    assert path.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    panels = [ax for ax in figure.axes if ax.get_visible()]
    assert [ax.get_title() for ax in panels] == list(ISHIGAMI_NAMES)
    for ax in panels:
        assert ax.get_xscale() == "log" and ax.xaxis.get_transform().base == 2
        assert [t.get_text() for t in ax.get_xticklabels()] == ["1024", "2048", "4096"]
    assert panels[0].get_ylabel() == "Sobol index [-]"
    # panels follow the ranking (largest total index first; Ishigami's
    # analytic ST: x1 0.558 > x2 0.442 > x3 0.244), whatever the table's order
    backwards = charts.convergence_chart(table.iloc[::-1], tmp_path / "backwards.png")
    assert [ax.get_title() for ax in backwards.axes if ax.get_visible()] == list(ISHIGAMI_NAMES)


# --------------------------------------------------------------------------
# one palette, one way to save (explore.figures)
# --------------------------------------------------------------------------

def test_palette_is_okabe_ito_and_every_module_uses_it():
    from hopscape import figures, maps, plots

    # the eight colours of Okabe & Ito (2008), Color Universal Design, as the
    # hex codes are commonly quoted from it (from memory, not re-read)
    assert set(figures.OKABE_ITO.values()) == {"#E69F00", "#56B4E9", "#009E73", "#F0E442", "#0072B2", "#D55E00",
                                               "#CC79A7", "#000000"}
    assert plots.OKABE_ITO is figures.OKABE_ITO
    assert maps.save_figure is plots.save_figure is charts.save_figure is figures.save_figure
    assert (charts.S1_COLOUR, charts.ST_COLOUR) == (figures.OKABE_ITO["blue"], figures.OKABE_ITO["orange"])


def test_save_figure_writes_each_format_and_releases_pyplot_figures(tmp_path):
    import matplotlib.pyplot as plt

    from hopscape.figures import save_figure

    fig, ax = plt.subplots()
    ax.plot([0, 1], [0, 1])
    paths = save_figure(fig, tmp_path / "new" / "line", ("png", "svg"))
    assert paths == [tmp_path / "new" / "line.png", tmp_path / "new" / "line.svg"]
    assert paths[0].read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert b"<svg" in paths[1].read_bytes()[:500]
    assert not plt.fignum_exists(fig.number)          # pyplot no longer holds it
    # one file named in full: its suffix gives the format
    fig, _ = plt.subplots()
    assert save_figure(fig, tmp_path / "one.pdf") == [tmp_path / "one.pdf"]
    assert (tmp_path / "one.pdf").read_bytes()[:5] == b"%PDF-"
