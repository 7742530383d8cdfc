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
                    "audit_KVRP", "audit_SLMB", "coverage", "orbit_differences", "signal_path",
                    "positions_enu_KVRP", "positions_enu_SLMB", "receiver_clock_KVRP", "receiver_clock_SLMB"}
UNIT = re.compile(r"\((?:[^()]*\b)?(ns|ns/s|µs|ms|µs/day|ns/day|m|dimensionless|RINEX name|hypothesis|"
                  r"GPST[^()]*|count[^()]*|%)\)")


@pytest.fixture(scope="module")
def content(demo_content):
    return demo_content


@pytest.fixture(scope="module")
def figures(content):
    from gnssrel.report.figures import build_figures

    return build_figures(content)


def test_every_expected_figure_is_drawn(figures):
    assert {f.key for f in figures} == EXPECTED_FIGURES


def _visible_axes(fig):
    return [ax for ax in fig.axes if ax.get_visible()]


def test_axes_have_labels_with_units_and_time_axes_name_gpst(figures):
    assert_axes_have_units(figures)


def assert_axes_have_units(figures):
    """Every visible axis is labelled with a unit, time axes name GPST (also used on real data)."""
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


def _systems_named(fig, names) -> set:
    """System names in the figure's legends (axes and figure) and panel titles ('GPS', 'GPS: 24 satellites')."""
    legends = [ax.get_legend() for ax in fig.axes] + list(fig.legends)
    texts = [ax.get_title() for ax in fig.axes] + [t.get_text() for leg in legends if leg for t in leg.get_texts()]
    return {n for n in names for t in texts if t == n or t.startswith((n + ":", n + " "))}


def test_legends_match_the_systems_drawn(figures, content):
    systems = {str(s)[0] for s in content.relativity["sv"].values}
    names = {"G": "GPS", "E": "Galileo", "C": "BeiDou", "R": "GLONASS", "J": "QZSS"}
    drawn = {names[s] for s in systems}
    for item in figures:       # no legend entry or panel for a system that is not drawn
        assert _systems_named(item.figure, names.values()) <= drawn, item.key
    clocks = next(f for f in figures if f.key == "clock_convention").figure
    assert _systems_named(clocks, names.values()) == drawn


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


@pytest.fixture(scope="module")
def written(content, figures, tmp_path_factory):
    """The report folder written once from the figures already drawn."""
    from gnssrel.report.builder import write_folder_atomically, write_report_files

    out = tmp_path_factory.mktemp("report") / "rep"
    write_folder_atomically(out, lambda staging: write_report_files(content, staging, figures))
    return out


def test_written_report_has_every_figure_caption_and_the_caution(content, figures, written):
    from gnssrel.report.html import CAUTION, REFERENCES

    out = written
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
    assert not [p for p in out.parent.iterdir() if p.name.startswith(".")]  # no staging left


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
    # every other 30-s epoch is off the 60-s grid: about half the pseudoranges (the demo data is regenerated
    # now and then, so the count is checked against the log's own total, not a fixed number)
    assert gps["read"] > 4000 and abs(gps["not on the --step grid"] - gps["read"] / 2) < 0.01 * gps["read"]
    assert gps["used"] <= gps["read"] - gps["not on the --step grid"]      # before: used == read
    assert Ledger.from_dict(content.accounting).unbalanced() == []


# Issue 12 acceptance: the figure list, a caption and units for every figure, the findings box states every
# k computed (parsed from the HTML, compared with summary.json), no local paths in the page.

SYSTEM_LETTER = {"GPS": "G", "Galileo": "E", "BeiDou": "C", "QZSS": "J", "GLONASS": "R"}
K_TEXT = re.compile(r"(GPS|Galileo|BeiDou|QZSS|GLONASS) k = (-?\d+\.\d{3}) (?:± (\d+\.\d{3})|\(σ < 0\.001\))")


def findings_items(page: str) -> list[tuple[str, str]]:
    """(class, text) of each item of the findings box, in order."""
    import html as html_lib

    start = page.index("<ul class='findings'>")
    box = page[start:page.index("</ul>", start)]
    return [(cls, html_lib.unescape(text)) for cls, text in
            re.findall(r'<li class="([\w-]+)"><span class="tag">[^<]*</span>(.*?)</li>', box)]


def _k_in(text: str) -> dict:
    return {SYSTEM_LETTER[m[0]]: (float(m[1]), float(m[2]) if m[2] else 0.0) for m in K_TEXT.findall(text)}


def assert_findings_hold_every_k(page: str, summary: dict) -> None:
    """Every k fitted to a receiver's log and every precise-clock k, with σ, is in the findings box as in
    summary.json (to the 3 decimals printed); the position medians too; results come before 'not judged'."""
    items = findings_items(page)
    kinds = [cls for cls, _ in items]
    if "not-judged" in kinds and "result" in kinds:
        assert max(i for i, k in enumerate(kinds) if k == "result") < kinds.index("not-judged"), kinds
    for name, audit in summary["receiver_audits"].items():
        (text,) = [t for _, t in items if t.startswith(f"{name} log: factor k")]
        shown = _k_in(text)
        computed = {s: f for s, f in audit["relativity_k"].items() if f["k"] is not None and np.isfinite(f["k"])}
        assert set(shown) == set(computed), (name, text)
        for s, f in computed.items():
            assert shown[s][0] == pytest.approx(f["k"], abs=5.1e-4), (name, s)
            assert shown[s][1] == pytest.approx(f["sigma"], abs=5.1e-4), (name, s)
        pos = audit["position"]
        if pos["median_error_3d_m"] is not None:
            (text,) = [t for _, t in items if t.startswith(f"{name} positions:")]
            assert f"{pos['median_error_3d_m']:.2f} m" in text
            assert f"{pos['median_error_3d_m_without_periodic']:.2f} m" in text
    if summary.get("clocks"):
        (text,) = [t for _, t in items if t.startswith("Precise minus broadcast clocks")]
        shown = _k_in(text)
        for s, e in summary["clocks"]["by_system"].items():
            assert shown[s][0] == pytest.approx(e["convention_k"], abs=5.1e-4), s
    if summary.get("orbits"):
        assert any(t.startswith("Broadcast against precise orbits:") for _, t in items)


def assert_figures_in_page(page: str, keys: set) -> None:
    """The page's figures are ``keys``, each with its image and a caption of some length."""
    assert set(re.findall(r"<figure id='([^']+)'>", page)) == keys
    for key in keys:
        block = page[page.index(f"<figure id='{key}'>"):]
        block = block[:block.index("</figure>")]
        assert "data:image/png;base64," in block, key
        caption = re.search(r"<figcaption>(.*?)<span class='files'>", block, re.DOTALL).group(1)
        assert len(re.sub(r"<[^>]+>", "", caption)) > 80, key


def test_report_page_acceptance_on_the_demo(content, figures, written):
    import json

    page = (written / "report.html").read_text(encoding="utf-8")
    summary = json.loads((written / "summary.json").read_text(encoding="utf-8"))
    assert_figures_in_page(page, EXPECTED_FIGURES)
    assert_findings_hold_every_k(page, summary)
    assert {"G", "E", "C"} <= set(_k_in(next(t for _, t in findings_items(page) if t.startswith("KVRP log"))))
    kinds = [cls for cls, _ in findings_items(page)]
    assert kinds[:2] == ["correct", "faulty"]                      # the verdicts first: KVRP ok, SLMB at fault
    footer = page[page.index("<footer>"):]
    assert str(SAMPLE_LOGS) not in page and "/" not in footer.split("Times are")[0]   # file names, no folders
    assert "KVRP00ZZZ_R_20251621000_03H_MN.rnx" in footer


def test_findings_of_a_log_without_receiver_files_state_every_result_first():
    # before: only "not judged ... no fixes or clock table", although the log's k had been fitted
    from types import SimpleNamespace

    from gnssrel.pipeline.results import ReceiverFindings
    from gnssrel.pipeline.verdicts import receiver_verdict
    from gnssrel.report.findings import NOT_JUDGED, RESULT, report_findings
    from gnssrel.report.tables import receivers_table

    status = "undetermined: sigma 0.35 > 0.25 (the periodic term is too small)"
    audit = {"relativity_k": {"G": {"k": 1.0171, "sigma": 0.0172, "status": "consistent", "expected_k": 1.0,
                                    "n_sat": 31},
                              "C": {"k": 1.049, "sigma": 0.041, "status": "consistent", "expected_k": 1.0, "n_sat": 20},
                              "E": {"k": -0.24, "sigma": 0.35, "status": status, "expected_k": 1.0, "n_sat": 10}},
             "position": {"reference": "header", "median_error_3d_m": 2.4, "median_error_3d_m_without_periodic": 8.9,
                          "n_epochs_solved": 2880}}
    r = ReceiverFindings(name="NYA1", audit_summary=audit, verdict=receiver_verdict("NYA1", audit, None))
    content = SimpleNamespace(receivers=[r], clock_summary=None, orbit_summary=None, clock_source=None,
                              inputs={"navigation": ["x_GN.rnx"], "observations": ["y.crx"]})
    found = report_findings(content)
    assert [f.kind for f in found] == [RESULT, RESULT, NOT_JUDGED, NOT_JUDGED, NOT_JUDGED, NOT_JUDGED]
    assert "GPS k = 1.017 ± 0.017 (consistent, 31 satellites)" in found[0].text
    assert "BeiDou k = 1.049 ± 0.041" in found[0].text and "Galileo k = -0.240 ± 0.350 (undetermined" in found[0].text
    assert "2.40 m with the periodic term applied, 8.90 m with it omitted" in found[1].text
    assert "header position is approximate" in found[1].text
    assert "no receiver fixes" in found[2].text and "Galileo (σ 0.35)" in found[3].text
    row = receivers_table(content).iloc[0]
    assert row["firmware"] == "not judged (no fixes or clock table given)" and "fault" not in row.index
    assert row["k in the log, GPS"] == "1.017 ± 0.017 (consistent)"


def test_default_title_names_the_station_and_day(content):
    from types import SimpleNamespace

    from gnssrel.pipeline.titles import report_title, station_of_file

    assert report_title(content) == "KVRP, SLMB 2025-06-11 (day 162)"
    t = np.datetime64("2024-05-03T06:00", "ns")
    nya = SimpleNamespace(receivers=[], time_span=(t, t + np.timedelta64(18, "h")),
                          inputs={"navigation": ["/data/NYA100NOR_S_20241240000_01D_GN.rnx.gz"]})
    assert report_title(nya) == "NYA1 2024-05-03 (day 124)"
    nya.time_span = (t - np.timedelta64(10, "h"), t + np.timedelta64(18, "h"))   # 20:00 the day before to 00:00
    assert report_title(nya) == "NYA1 2024-05-02 to 2024-05-03 (days 123 to 124)"
    assert station_of_file("mojn1770.20n") == "MOJN" and station_of_file("brdc1770.20n") is None
    nya.inputs = {"navigation": ["BRDC00IGS_R_20241240000_01D_MN.rnx.gz"]}
    nya.time_span = (t, t)
    assert report_title(nya) == "gnssrel report: 2024-05-03 (day 124)"


def test_report_command_titles_from_the_files_and_fails_on_a_fault(tmp_path, monkeypatch):
    # --title defaulted to "gnssrel report"; a fault found exited 0 whatever the options
    from gnssrel.cli import main
    from gnssrel.report import builder

    written = {}
    monkeypatch.setattr(builder, "write_report", lambda content, output, plots=None: written.setdefault("c", content)
                        and tmp_path)
    argv = ["report", "-q", str(SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_MN.rnx"),
            "--obs", str(SAMPLE_LOGS / "SLMB00ZZZ_R_20251621000_03H_30S_MO.rnx"),
            "--receiver-fixes", str(SAMPLE_LOGS / "SLMB_fixes.nmea"),
            "--start", "2025-06-11T10:00", "--end", "2025-06-11T11:00", "--output", str(tmp_path / "rep")]
    assert main(argv + ["--fail-on-fault"]) == 4
    assert written["c"].title == written["c"].summary["title"] == "SLMB 2025-06-11 (day 162)"
