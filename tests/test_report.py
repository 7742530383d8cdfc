"""The report: every figure drawn with units, GPST time axes and captions; the HTML self-contained.

Runs the chain once on the invented scenario in sample_logs/ (a few seconds) and
inspects the matplotlib Figure objects before saving, then the written folder.
"""

from __future__ import annotations

import re
import struct

import numpy as np
import pytest
from conftest import SAMPLE_LOGS
from matplotlib.ticker import FixedFormatter, FuncFormatter

from gnssrel.report.layout import GpstFormatter

EXPECTED_FIGURES = {"periodic_term", "rate_decomposition", "proper_time", "clock_convention",
                    "audit_KVRP", "audit_SLMB", "coverage"}
UNIT = re.compile(r"\((?:[^()]*\b)?(ns|µs|µs/day|ns/day|m|dimensionless|RINEX name|hypothesis|"
                  r"GPST[^()]*)\)")


@pytest.fixture(scope="module")
def content():
    from gnssrel.jobs.demo import scenario_files
    from gnssrel.pipeline.analysis import analyse

    if not (SAMPLE_LOGS / "scenario.json").exists():
        pytest.skip("sample_logs/ is not in this checkout")
    files = scenario_files(SAMPLE_LOGS)
    return analyse(files["nav"], files["precise"], files["obs"], files["fixes"], files["clocks"],
                   title="test report", progress=lambda text: None)


@pytest.fixture(scope="module")
def figures(content):
    from gnssrel.report.figures import build_figures

    return build_figures(content)


def test_every_expected_figure_is_drawn(figures):
    assert {f.key for f in figures} == EXPECTED_FIGURES


def _visible_axes(fig):
    return [ax for ax in fig.axes if ax.get_visible()]


def test_axes_have_labels_with_units_and_time_axes_name_gpst(figures):
    for item in figures:
        for ax in _visible_axes(item.figure):
            time_axis = isinstance(ax.xaxis.get_major_formatter(), GpstFormatter)
            xlabel, ylabel = ax.get_xlabel(), ax.get_ylabel()
            if time_axis:   # a stacked panel may leave the label to the panel below it shares time with
                labels = [a.get_xlabel() for a in ax.get_shared_x_axes().get_siblings(ax)]
                assert "GPST" in xlabel or (not xlabel and any("GPST" in t for t in labels)), (item.key, xlabel)
            elif ax.get_xticklabels() and any(t.get_text() for t in ax.get_xticklabels()):
                assert xlabel and UNIT.search(xlabel), (item.key, "x", xlabel)
            categorical_y = isinstance(ax.yaxis.get_major_formatter(), (FixedFormatter, FuncFormatter))
            assert ylabel, (item.key, "y label missing")
            if not categorical_y:
                assert UNIT.search(ylabel), (item.key, "y", ylabel)


def test_shared_time_axes_are_gpst_on_the_bottom_panel(figures):
    by_key = {f.key: f for f in figures}
    for key in ("periodic_term", "proper_time", "coverage"):
        bottoms = [ax for ax in _visible_axes(by_key[key].figure)
                   if isinstance(ax.xaxis.get_major_formatter(), GpstFormatter) and ax.get_xlabel()]
        assert bottoms and all("GPST" in ax.get_xlabel() for ax in bottoms)


def test_legends_match_the_systems_drawn(figures, content):
    systems = {str(s)[0] for s in content.relativity["sv"].values}
    names = {"G": "GPS", "E": "Galileo", "C": "BeiDou", "R": "GLONASS", "J": "QZSS"}
    periodic = next(f for f in figures if f.key == "periodic_term").figure
    texts = {t.get_text() for t in periodic.axes[0].get_legend().get_texts()}
    assert {names[s] for s in systems} <= texts
    assert not ({"GLONASS", "QZSS"} & texts - {names[s] for s in systems})


def test_captions_name_their_sources(figures):
    caps = {f.key: f.caption for f in figures}
    assert "IS-GPS-200 3.3.1.1" in caps["rate_decomposition"] and "4.4647e-10" in caps["rate_decomposition"]
    assert "IS-GPS-200 20.3.3.3.3.1" in caps["periodic_term"]
    assert "Kouba 2004" in caps["proper_time"]
    for f in figures:   # a figure with a time axis names the scale in its caption too
        if any(isinstance(ax.xaxis.get_major_formatter(), GpstFormatter) for ax in _visible_axes(f.figure)):
            assert "GPST" in f.caption, f.key


def _png_size(path):
    head = path.read_bytes()[:24]
    assert head[:8] == b"\x89PNG\r\n\x1a\n"
    return struct.unpack(">II", head[16:24])


def test_written_report_has_every_figure_caption_and_the_caution(content, figures, tmp_path):
    from gnssrel.report.builder import write_report
    from gnssrel.report.html import CAUTION, REFERENCES

    out = write_report(content, tmp_path / "rep")
    page = (out / "report.html").read_text(encoding="utf-8")
    for item in figures:
        png = out / f"{item.key}.png"
        assert png.stat().st_size > 20_000, item.key
        width, height = _png_size(png)
        assert width >= 900 and height >= 500, (item.key, width, height)
        assert (out / f"{item.key}.svg").stat().st_size > 10_000
        import html as html_lib

        assert html_lib.escape(item.caption) in page, item.key
    assert page.count("data:image/png;base64,") == len(figures)
    assert CAUTION in page and "safety-of-life" in page
    for ref in ("IS-GPS-200", "Galileo", "BDS-SIS-ICD", "GLONASS", "IERS Conventions (2010)",
                "Ashby (2003)", "Kouba (2004)"):
        assert ref in page
    assert all(r.split(" ")[0] in page for r in REFERENCES)
    for stem in ("receivers", "relativity_per_satellite", "clock_conventions", "orbits_per_satellite"):
        assert (out / f"{stem}.csv").stat().st_size > 100
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]  # no staging left


def test_failed_build_leaves_no_folder(content, figures, tmp_path, monkeypatch):
    from gnssrel.report import builder

    def broken(*args, **kwargs):
        raise RuntimeError("disk full (simulated)")

    # two figures already drawn (saved as files before the failure) keep the test quick
    monkeypatch.setattr(builder, "build_figures", lambda _content: figures[:2])
    monkeypatch.setattr(builder, "render_html", broken)
    with pytest.raises(RuntimeError):
        builder.write_report(content, tmp_path / "rep")
    assert list(tmp_path.iterdir()) == []


# Machado, Oliveira & Fernandes 2009 (IEEE TVCG 15(6)), severity 1.0 (published matrices).
_CVD = {"protan": [[0.152286, 1.052583, -0.204868], [0.114503, 0.786281, 0.099216], [-0.003882, -0.048116, 1.051998]],
        "deutan": [[0.367322, 0.860646, -0.227968], [0.280085, 0.672501, 0.047413], [-0.011820, 0.042940, 0.968881]],
        "tritan": [[1.255528, -0.076749, -0.178779], [-0.078411, 0.930809, 0.147602], [0.004733, 0.691367, 0.303900]]}


def _lab(hex_colour, matrix):
    c = np.array([int(hex_colour[i:i + 2], 16) / 255 for i in (1, 3, 5)])
    lin = np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)
    lin = np.clip(np.asarray(matrix) @ lin, 0, 1)
    xyz = np.array([[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722], [0.0193, 0.1192, 0.9505]]) @ lin
    xyz /= np.array([0.95047, 1.0, 1.08883])
    f = np.where(xyz > 0.008856, np.cbrt(xyz), 7.787 * xyz + 16 / 116)
    return np.array([116 * f[1] - 16, 500 * (f[0] - f[1]), 200 * (f[1] - f[2])])


def test_palette_survives_colour_vision_deficiency():
    """Every pair of system colours stays >= 15 CIELAB units apart under each simulated deficiency
    (threshold: our design choice; ~10 is a commonly used 'clearly distinct' level, common practice)."""
    from gnssrel.report.palette import INK, SYSTEM_COLOURS

    colours = list(SYSTEM_COLOURS.values()) + [INK]
    for name, m in [("normal", np.eye(3))] + list(_CVD.items()):
        labs = [_lab(c, m) for c in colours]
        gaps = [np.linalg.norm(a - b) for i, a in enumerate(labs) for b in labs[i + 1:]]
        assert min(gaps) >= 15.0, name


def test_html_tables_keep_one_format_per_column_and_never_show_sigma_as_zero():
    import pandas as pd

    from gnssrel.report.html import table_html

    page = table_html(pd.DataFrame({"system": ["GPS", "BeiDou"], "max periodic term (ns)": [107.6, 16.713],
                                    "k": [1.0, -3.4e-07], "σ(k)": [2.791e-06, 0.0071]}))
    cells = re.findall(r"<td[^>]*>([^<]*)</td>", page)
    assert cells == ["GPS", "107.6", "1.000", "&lt; 0.001", "BeiDou", "16.7", "0.000", "0.007"]


def test_verdict_sentence_prints_tiny_sigmas_as_a_bound():
    from gnssrel.pipeline.verdicts import receiver_verdict

    check = {"by_system": {s: {"convention": "excludes-periodic", "status": "fault: periodic term missing",
                               "convention_k": -3.4e-07, "convention_k_sigma": 5.9e-07} for s in "CEG"}}
    sentence = receiver_verdict("SLMB", None, check)["verdict"]
    assert "± 0.000" not in sentence and "-0.000" not in sentence
    assert "clock table k = G 0.000 (σ < 0.001), E 0.000 (σ < 0.001), C 0.000 (σ < 0.001)" in sentence


def test_step_decimation_is_counted_in_the_report_accounting():
    # `gnssrel report --step 60` on 30-s logs audits every other epoch: the pseudoranges left out
    # are counted as not on the --step grid, not reported as used (before: read 4826 = used 4826 for GPS)
    from gnssrel.accounting import Ledger
    from gnssrel.pipeline.analysis import analyse

    nav = SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_MN.rnx"
    obs = SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_30S_MO.rnx"
    if not obs.exists():
        pytest.skip("sample_logs/ is not in this checkout")
    content = analyse([nav], obs_paths=[obs], progress=lambda text: None, step_s=60.0)
    gps = content.accounting["observations"]["G"]
    assert gps["read"] == 4826                       # the demo log's GPS pseudoranges (regression)
    assert gps["used"] == 2414 and gps["not on the --step grid"] == 2412
    assert Ledger.from_dict(content.accounting).unbalanced() == []
