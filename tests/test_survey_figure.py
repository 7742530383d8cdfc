"""The survey figure (issue 15, "the coordinate difference each one makes ... as a figure"): built from a
summary dict alone (no run), its scales, order, units and caption; and `gnssrel survey --plots DIR` on a
1-h invented log (gnssrel.simulate.write_survey) writing it as PNG, SVG and PDF."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from gnssrel.cli import main
from gnssrel.report.fig_survey import LINEAR_WITHIN_MM, survey_figure, term_rows
from gnssrel.report.palette import gnssrel_style

SUMMARY = {
    "position": {"x_m": 1.0, "y_m": 2.0, "z_m": 3.0, "reference": "header",
                 "east_m": 0.0123, "north_m": -0.0045, "up_m": 0.0671},
    "term_effects_mm": {
        "periodic": {"east": -3000.0, "north": 400.0, "up": 4000.0},        # 3-D 5016 mm
        "j2": {"east": 12.0, "north": -5.0, "up": -20.0},                    # 3-D 23.8 mm
        "shapiro": {"east": 0.3, "north": -0.4, "up": 4.0},                  # 3-D 4.03 mm
        "periodic_state_form": {"east": 2.0, "north": 1.0, "up": -30.0},     # 3-D 30.1 mm
    },
    "convergence": [{"hours": 1.0, "error_3d_m": 0.25, "to_final_3d_m": 0.2},
                    {"hours": 2.0, "error_3d_m": 0.04, "to_final_3d_m": 0.03},
                    {"hours": 3.0, "error_3d_m": 0.012, "to_final_3d_m": 0.0}],
    "relativity_k_phase": {"G": {"k": 1.00123, "sigma": 0.0021}},
}


@pytest.fixture(scope="module")
def figure():
    with gnssrel_style():
        return survey_figure(SUMMARY, "TEST00ABC")


def _markers(ax):
    """{(x, y)} of the single-point marker lines of an axes."""
    return [(float(line.get_xdata()[0]), float(line.get_ydata()[0])) for line in ax.get_lines()
            if len(line.get_xdata()) == 1 and line.get_marker() not in (None, "None", "")]


def test_terms_sorted_by_size_with_their_3d_size_and_units(figure):
    rows = term_rows(SUMMARY)
    assert [r[0] for r in rows] == ["periodic", "periodic_state_form", "j2", "shapiro"]
    assert rows[0][3] == pytest.approx(np.sqrt(3000.0**2 + 400.0**2 + 4000.0**2))
    ax = figure.figure.axes[0]
    labels = [t.get_text() for t in ax.get_yticklabels()]
    # top of the axis (largest y) is the largest effect; each label carries its 3-D size with its unit
    order = [lab for _, lab in sorted(zip([t.get_position()[1] for t in ax.get_yticklabels()], labels),
                                      reverse=True)]
    assert order == ["periodic term omitted  (5.02 m)", "periodic term as -2 r·v/c² (state form)  (30 mm)",
                     "J2 term omitted  (24 mm)", "Shapiro delay omitted  (4.0 mm)"]
    assert "mm" in ax.get_xlabel() and "symmetric-log" in ax.get_xlabel()


def test_each_component_is_drawn_at_its_value_on_a_symmetric_log_axis(figure):
    ax = figure.figure.axes[0]
    assert ax.get_xscale() == "symlog"
    assert ax.xaxis.get_transform().linthresh == LINEAR_WITHIN_MM
    xs = sorted(x for x, _ in _markers(ax))
    expected = sorted(v for e in SUMMARY["term_effects_mm"].values() for v in e.values())
    assert xs == pytest.approx(expected)
    lo, hi = ax.get_xlim()
    assert lo <= -3000.0 and hi >= 4000.0 and hi == -lo          # symmetric, room for the metres
    # the metre ticks are written in metres: "1 m", "-10 m"
    ticks = [ax.xaxis.get_major_formatter()(v) for v in (-10000.0, -1.0, 0.0, 10.0, 1000.0)]
    assert ticks == ["-10 m", "-1", "0", "10", "1 m"]


def test_convergence_in_mm_on_a_log_axis_without_the_zero_point(figure):
    ax = figure.figure.axes[1]
    assert ax.get_yscale() == "log" and "mm" in ax.get_ylabel() and "(h)" in ax.get_xlabel()
    lines = {line.get_label(): line for line in ax.get_lines()}
    final = lines["to the solution of the whole log"]
    assert list(final.get_xdata()) == [1.0, 2.0]                    # the zero at 3 h cannot be on a log axis
    assert list(final.get_ydata()) == pytest.approx([200.0, 30.0])
    assert list(lines["to the reference position"].get_ydata()) == pytest.approx([250.0, 40.0, 12.0])


def test_caption_states_units_scale_and_figures(figure):
    c = figure.caption
    for text in ("millimetres", "symmetric-logarithmic", "linear within ±1 mm", "logarithmic axis",
                 "largest 5.02 m", "smallest 4.0 mm: Shapiro delay omitted", "5 point(s) drawn",
                 "east 0.012 m", "north -0.004 m", "up 0.067 m", "G 1.00123 ± 0.0021"):
        assert text in c, text
    assert figure.key == "survey_terms_TEST00ABC"


def test_no_term_effects_no_figure_and_one_block_says_so():
    assert survey_figure({"position": {}}) is None
    one = dict(SUMMARY, convergence=[{"hours": 1.0, "error_3d_m": None, "to_final_3d_m": 0.0}])
    with gnssrel_style():
        item = survey_figure(one)
    texts = [t.get_text() for t in item.figure.axes[1].texts]
    assert any("no convergence to draw" in t for t in texts) and item.key == "survey_terms"


def test_survey_plots_option_writes_png_svg_pdf(tmp_path):
    from gnssrel.simulate.write_survey import write_survey

    manifest = write_survey(tmp_path / "sim", seed=20250611, hours=1.0)
    path = {f["kind"]: str(tmp_path / "sim" / f["path"]) for f in manifest["files"]}
    target = tmp_path / "s.json"
    assert main(["survey", path["observations"], path["navigation"], "--precise", path["sp3"], path["clock"],
                 "--no-jackknife", "--plots", str(tmp_path / "plots"), "--summary", str(target), "-q"]) == 0
    plots = json.loads(target.read_text())["plots"]
    assert sorted(plots) == ["pdf", "png", "svg"]
    for fmt, p in plots.items():
        data = Path(p).read_bytes()
        assert data[:4] == {"png": b"\x89PNG", "pdf": b"%PDF", "svg": b"<?xm"}[fmt]
    assert "coordinate change when the term is switched off (mm" in Path(plots["svg"]).read_text(encoding="utf-8")


def test_plots_must_be_a_folder(tmp_path, capsys):
    not_a_folder = tmp_path / "file.txt"
    not_a_folder.write_text("x")
    assert main(["survey", "obs.rnx", "nav.rnx", "--precise", "a.sp3", "--plots", str(not_a_folder)]) == 2
    assert "--plots: not a folder" in capsys.readouterr().err
