"""The campaign report (issue 11): ``DIR/report/`` with report.html and four figures, each PNG + SVG.

Built on the small invented campaign of ``tests/test_campaign.py`` (three good station-days, one log
cut inside its header), run in-process on a one-worker local cluster by ``gnssrel campaign``.
"""

from __future__ import annotations

import html
import json
import shutil

import numpy as np
import pandas as pd
import pytest
from test_campaign import OPTIONS, _invented_campaign

from gnssrel.cli import main
from gnssrel.report import campaign_report
from gnssrel.report.campaign_figures import pseudorange_residuals_m
from gnssrel.report.html import CAUTION

FIGURES = ("campaign_k", "campaign_position", "campaign_satellites", "campaign_accounting")


@pytest.fixture(scope="module")
def campaign(tmp_path_factory):
    """(campaign folder, summary) of one run with the report (the default)."""
    base = tmp_path_factory.mktemp("campaign_report")
    out = base / "out"
    code = main(["campaign", str(_invented_campaign(base / "logs")), "--output", str(out), "--workers", "1",
                 *OPTIONS])
    assert code == 3                                           # one task failed, by design
    return out, json.loads((out / "summary.json").read_text())


def test_every_figure_is_written_as_png_svg_and_pdf(campaign):
    out, _ = campaign
    report = out / "report"
    assert {p.name for p in report.iterdir()} == {"report.html"} | {f"{k}.{x}" for k in FIGURES
                                                                    for x in ("png", "svg", "pdf")}
    assert (report / f"{FIGURES[0]}.pdf").read_bytes()[:5] == b"%PDF-"
    for key in FIGURES:
        assert (report / f"{key}.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
        assert "<svg" in (report / f"{key}.svg").read_text()[:2000]
    assert not list(out.rglob("*.part")) and not list(out.glob(".report.*"))


def test_html_names_every_station_day_failed_task_and_caption(campaign):
    out, summary = campaign
    page = (out / "report" / "report.html").read_text()
    assert html.escape(CAUTION) in page
    table = pd.read_parquet(out / "campaign.parquet")
    assert len(table) == 4
    for station, day in zip(table["station"], table["day"]):
        assert f"<td class=\"text\">{station}</td><td class=\"text\">{day}</td>" in page
    failed = [t for t in summary["tasks"] if t["status"] != "ok"]
    assert [t["station"] for t in failed] == ["ST0400ZZZ"]
    assert f"ST0400ZZZ 2025-06-11.</span>{html.escape(failed[0]['reason'])}</li>" in page
    assert page.count("<figcaption>") == 4
    for key in FIGURES:
        assert f"<figure id='{key}'>" in page and f"href='{key}.svg'" in page
    assert "GPST" in page


def test_k_figure_draws_each_k_with_its_sigma_and_both_reference_lines(campaign):
    out, _ = campaign
    figures = {f.key: f for f in campaign_report.build_campaign_figures(out)}
    assert list(figures) == list(FIGURES)
    assert all(len(f.caption) > 100 for f in figures.values())
    ax = figures["campaign_k"].figure.axes[0]
    levels = sorted({float(line.get_ydata()[0]) for line in ax.lines if len(set(line.get_ydata())) == 1})
    assert 0.0 in levels and 1.0 in levels                    # k = 0 and k = 1 (specification)
    table = pd.read_parquet(out / "campaign.parquet")
    ok = table[table["status"] == "ok"]
    markers = [line for line in ax.lines if line.get_marker() == "o"]       # the errorbar's data points
    assert len(markers) == 1
    assert np.allclose(markers[0].get_ydata(), ok["k_G"].to_numpy())
    bars = ax.collections[0].get_segments()                                  # k - sigma .. k + sigma
    assert np.allclose([s[1, 1] - s[0, 1] for s in bars], 2 * ok["sigma_k_G"].to_numpy())
    # the position figure: one bar per station-day and hypothesis, heights the table's medians
    bars = figures["campaign_position"].figure.axes[0].patches
    heights = sorted(round(b.get_height(), 6) for b in bars if b.get_height() > 0)
    expected = sorted(round(v, 6) for v in pd.concat([ok["median_error_3d_m"],
                                                     ok["median_error_3d_m_without_periodic"]]))
    assert heights == expected


def test_a_failure_leaves_no_report_folder_and_keeps_an_earlier_one(campaign, tmp_path, monkeypatch):
    out, _ = campaign
    target = tmp_path / "report"

    def broken(*_):
        raise RuntimeError("drawing failed")

    monkeypatch.setattr(campaign_report, "accounting_figure", broken)
    with pytest.raises(RuntimeError):
        campaign_report.write_campaign_report(out, target)
    assert list(tmp_path.iterdir()) == []                      # nothing staged is left behind
    shutil.copytree(out / "report", target)
    before = (target / "report.html").read_bytes()
    with pytest.raises(RuntimeError):
        campaign_report.write_campaign_report(out, target)
    assert (target / "report.html").read_bytes() == before and [p.name for p in tmp_path.iterdir()] == ["report"]


def test_no_report_option(campaign, tmp_path):
    out, _ = campaign
    again = tmp_path / "out"
    shutil.copytree(out, again)
    shutil.rmtree(again / "report")
    code = main(["campaign", str(out.parent / "logs"), "--output", str(again), "--workers", "1", "--no-report",
                 *OPTIONS])
    assert code == 3 and not (again / "report").exists()


def test_residuals_remove_the_receiver_clock_and_the_offset_between_systems():
    # two epochs, G01-G03 and E11-E12; the pseudorange is the model plus a receiver clock (100 m, then
    # 250 m), a Galileo offset of 40 m and 1 m on G01 alone.  The periodic term is the user's to add,
    # except where the broadcast clock already holds it (E12 here, as GLONASS clocks do)
    c = 299_792_458.0
    svs = ["G01", "G02", "G03", "E11", "E12"] * 2
    t = np.repeat(np.array(["2025-06-11T10:00", "2025-06-11T10:02"], "datetime64[ns]"), 5)
    periodic = np.array([1e-8, -2e-8, 3e-9, 7e-9, 2e-8] * 2)
    in_clock = np.array([False, False, False, False, True] * 2)
    clock = np.repeat([100.0, 250.0], 5) + np.array([1.0, 0, 0, 40.0, 40.0] * 2)
    model = 2.2e7 - c * (1e-4 + np.where(in_clock, 0.0, periodic)) + 3.0 + 1.0 + 0.5
    table = pd.DataFrame({"time": t, "sv": svs, "system": [s[0] for s in svs], "pseudorange_m": model + clock,
                          "geometric_range_m": 2.2e7, "satellite_clock_s": 1e-4, "periodic_s": periodic,
                          "periodic_in_clock": in_clock, "j2_s": 0.0, "troposphere_m": 3.0, "ionosphere_m": 1.0,
                          "group_delay_m": 0.5, "shapiro_m": 0.0})
    assert np.allclose(pseudorange_residuals_m(table), [1.0, 0, 0, 0, 0] * 2, atol=1e-6)
