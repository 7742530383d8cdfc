"""The receiver satellite-clock table: its reader, and the fault signatures of the check.

Invented constellations (tests/synthetic_clocks.py) stand in for a receiver: the test
writes what a correct or a faulty firmware would print and checks the verdict.  The
expected k per system is the rule of the interface specifications: the user adds the
periodic term for GPS/Galileo/BeiDou/QZSS (IS-GPS-200 20.3.3.3.3.1, published) and not
for GLONASS (NAVI "Relativistic Clock Correction", published).
"""

from __future__ import annotations

import gzip

import numpy as np
import pytest
from synthetic_clocks import kepler_orbit, make_constellation, merge_constellations

from gnssrel.accounting import Ledger
from gnssrel.clocks.firmware import EXPECTED_K, FAULT_SIGNATURES, check_receiver_clocks
from gnssrel.constants import C_M_S, GPS
from gnssrel.errors import FileFormatError
from gnssrel.io.receiver_clocks import read_receiver_clocks

T0 = np.datetime64("2020-06-25T00:00:00", "ns")


def _write(path, times, sv, values, scale="GPST", fmt="{:.17g}"):
    lines = ["# invented receiver, satellite clock corrections", "time,time_scale,sv,clock_correction_s,flags"]
    for i, t in enumerate(times):
        for j, s in enumerate(sv):
            if np.isfinite(values[i, j]):
                lines.append(f"{str(t)[:19]},{scale},{s},{fmt.format(values[i, j])},")
    path.write_text("\n".join(lines) + "\n")
    return path


# ---- the reader -------------------------------------------------------------------------------

def test_reader_converts_each_scale_to_gpst(tmp_path):
    text = ("time,time_scale,sv,clock_correction_s,flags\n"
            "2020-06-25T00:00:00,GPST,G05,1.5e-4,tgd\n"
            "2020-06-25T00:00:00,UTC,G06,2.5e-4,\n"          # GPST - UTC = 18 s in 2020 (IERS Bulletin C)
            "2020-06-25T03:00:00,GLONASST,R07,-3.0e-5,\n"    # GLONASST = UTC + 3 h (GLONASS ICD 3.3.3)
            "2020-06-25T00:00:00,BDT,C20,1.0e-6,\n")         # BDT = GPST - 14 s (BDS-SIS-ICD 5.2.2)
    path = tmp_path / "rx.csv.gz"
    path.write_bytes(gzip.compress(text.encode()))
    df = read_receiver_clocks(path)
    by_sv = df.set_index("sv")
    assert by_sv.loc["G05", "time"] == np.datetime64("2020-06-25T00:00:00", "ns")
    assert by_sv.loc["G06", "time"] == np.datetime64("2020-06-25T00:00:18", "ns")
    assert by_sv.loc["R07", "time"] == np.datetime64("2020-06-25T00:00:18", "ns")
    assert by_sv.loc["C20", "time"] == np.datetime64("2020-06-25T00:00:14", "ns")
    assert by_sv.loc["G05", "flags"] == "tgd" and by_sv.loc["G05", "clock_correction_s"] == 1.5e-4
    assert by_sv.loc["R07", "line"] == 4


@pytest.mark.parametrize("row, message, system", [
    ("2020-06-25T00:00:00,TAI2,G05,1e-4,", "unknown time scale", "G"),
    ("2020-06-25T00:00:00,GPST,X05,1e-4,", "RINEX name", "-"),
    ("2020-06-25T00:00:00,GPST,G05,abc,", "not a plain number", "G"),
    ("2020-06-25T00:00:00,GPST,G05,1_0e-4,", "not a plain number", "G"),     # float() would take it
    ("2020-06-25T00:00:00,GPST,G05,NaN,", "not a plain number", "G"),
    ("2020-06-25T00:00:00,GPST,G05,-INF,", "not a plain number", "G"),
    ("2020-06-25T00:00:00,GPST,G05,0.5,", "beyond", "G"),
    ("2020-06-35T00:00:00,GPST,G05,1e-4,", "ISO 8601", "G"),
    ("2020-02-30T00:00:00,GPST,G05,1e-4,", "ISO 8601", "G"),
    ("2020-06-25T00:00:00,GPST,G01,1e-4,", "twice", "G"),
    ("2020-06-25T00:00:00,GPST,G05,1e-4,,extra", "columns", "G"),
])
def test_a_bad_row_is_refused_counted_and_named(tmp_path, row, message, system):
    path = tmp_path / "rx.csv"
    path.write_text("time,time_scale,sv,clock_correction_s,flags\n2020-06-25T00:00:00,GPST,G01,1e-4,\n"
                    f"{row}\n2020-06-25T00:00:30,GPST,G01,2e-4,\n")
    df = read_receiver_clocks(path)
    assert df["line"].tolist() == [2, 4] and df["clock_correction_s"].tolist() == [1e-4, 2e-4]
    ledger = Ledger.from_dict(df.attrs["accounting"])
    assert ledger.unbalanced() == []
    assert ledger.count("receiver_clock_rows") == 3 and ledger.count("receiver_clock_rows", None, "used") == 2
    (reason, n), = ledger.dropped("receiver_clock_rows", system).items()
    assert message in reason and n == 1
    assert len(ledger.warnings) == 1 and ledger.warnings[0].startswith(f"{path}:3: ")


def test_appended_bytes_and_non_utf8_rows_cost_those_rows(tmp_path):
    path = tmp_path / "rx.csv"
    good = "time,time_scale,sv,clock_correction_s,flags\n2020-06-25T00:00:00,GPST,G01,1e-4,\n"
    path.write_bytes(good.encode() + b"2020-06-25T00:00:30,GPST,G0\xff,1e-4,\n\x00\x8b\x1f,,garbage\xfe\n")
    df = read_receiver_clocks(path)
    ledger = Ledger.from_dict(df.attrs["accounting"])
    assert len(df) == 1 and ledger.unbalanced() == []
    assert ledger.count("receiver_clock_rows", "-") == 2 and ledger.count("receiver_clock_rows", "-", "used") == 0


def test_a_table_of_only_bad_rows_is_one_error_naming_the_file(tmp_path):
    path = tmp_path / "rx.csv"
    path.write_text("time,time_scale,sv,clock_correction_s\n2020-06-25T00:00:00,GPST,G01,nan\n")
    with pytest.raises(FileFormatError, match="no usable row") as info:
        read_receiver_clocks(path)
    assert "rx.csv:2:" in str(info.value)


def test_reader_refuses_a_table_without_the_required_columns(tmp_path):
    path = tmp_path / "rx.csv"
    path.write_text("time,sv,clock_correction_s\n2020-06-25T00:00:00,G01,1e-4\n")
    with pytest.raises(FileFormatError, match="lacks column.*time_scale"):
        read_receiver_clocks(path)


def test_reader_refuses_an_empty_table(tmp_path):
    path = tmp_path / "rx.csv"
    path.write_text("# nothing\n")
    with pytest.raises(FileFormatError, match="empty"):
        read_receiver_clocks(path)


# ---- the check --------------------------------------------------------------------------------

def _constellation(t0=T0, hours=12, step_min=10):
    times = t0 + np.arange(0, hours * 60 + 1, step_min).astype("timedelta64[m]")
    g = make_constellation(times, "G", 10, seed=11)
    r = make_constellation(times, "R", 10, seed=12, e_range=(0.0005, 0.002))
    nav, states, truth = merge_constellations([g, r])
    return times, nav, states, truth, g[2]


def _check(tmp_path, times, sv, values, nav, states, fmt="{:.17g}"):
    df = read_receiver_clocks(_write(tmp_path / "rx.csv", times, sv, values, fmt=fmt))
    return check_receiver_clocks(df, nav, states=states)[1]["by_system"]


def test_a_correct_receiver_is_as_specified(tmp_path):
    times, nav, states, truth, _ = _constellation()
    poly = states["clock_poly_s"].values
    is_glo = np.array([s[0] == "R" for s in states["sv"].values])
    correct = poly + np.where(is_glo, 0.0, truth["periodic_s"])
    result = _check(tmp_path, times, states["sv"].values, correct, nav, states)
    assert result["G"]["status"] == "as specified" and abs(result["G"]["convention_k"] - 1) < 1e-3
    assert result["R"]["status"] == "as specified" and abs(result["R"]["convention_k"]) < 1e-2
    # NavIC as GPS (IRNSS SPS ICD 1.1, from memory); SBAS: undetermined, not added (gnssrel/systems.py)
    assert EXPECTED_K == {"G": 1.0, "E": 1.0, "C": 1.0, "J": 1.0, "R": 0.0, "I": 1.0, "S": 0.0}
    assert result["G"]["week_crossover"].startswith("not testable")


def test_periodic_term_on_glonass_and_missing_on_gps_are_named(tmp_path):
    times, nav, states, truth, _ = _constellation()
    poly = states["clock_poly_s"].values
    is_glo = np.array([s[0] == "R" for s in states["sv"].values])
    faulty = poly + np.where(is_glo, truth["periodic_s"], 0.0)   # everything the wrong way round
    result = _check(tmp_path, times, states["sv"].values, faulty, nav, states)
    assert result["R"]["status"] == "fault: periodic term applied to GLONASS"
    assert abs(result["R"]["convention_k"] - 1) < 0.02
    assert result["G"]["status"] == "fault: periodic term missing"


def test_missing_week_crossover_is_detected(tmp_path):
    # Saturday 22:00 to Sunday 02:00 GPST: GPS week 2112 starts 2020-06-28 00:00 (IS-GPS-200 6.2.4 epoch).
    times, nav, states, truth, g_truth = _constellation(np.datetime64("2020-06-27T22:00", "ns"), hours=4,
                                                        step_min=5)
    poly = states["clock_poly_s"].values
    is_glo = np.array([s[0] == "R" for s in states["sv"].values])
    correct = poly + np.where(is_glo, 0.0, truth["periodic_s"])
    # Without the fold, t - toc is off by one week after the boundary: error -a_f1 x 604 800 s.
    after = (times >= np.datetime64("2020-06-28T00:00", "ns"))[:, None]
    af1 = np.concatenate([g_truth["elements"]["af1"], np.zeros(10)])[None, :]
    faulty = correct + np.where(after & ~is_glo[None, :], -af1 * 604_800.0, 0.0)
    bad = _check(tmp_path, times, states["sv"].values, faulty, nav, states)
    good = _check(tmp_path, times, states["sv"].values, correct, nav, states)
    assert bad["G"]["week_crossover"] == "missing" and abs(bad["G"]["week_crossover_weight"] - 1) < 1e-3
    assert good["G"]["week_crossover"] == "applied" and abs(good["G"]["week_crossover_weight"]) < 1e-3
    assert good["G"]["status"] == "as specified"


def test_eccentric_anomaly_at_reception_is_seen_only_at_sub_picosecond_resolution(tmp_path):
    times, nav, states, _truth, g_truth = _constellation()
    el = g_truth["elements"]
    lag_s = 0.07
    # The periodic term evaluated 0.07 s late, from the invented orbit itself (not the rate formula).
    _, pos, vel = kepler_orbit(el["e"], el["sqrt_a"], el["m0"], el["t_s"] + lag_s, GPS.gm_m3_s2,
                               GPS.omega_earth_rad_s)
    late = -2 * np.sum(pos * vel, axis=-1) / C_M_S**2
    poly = states["clock_poly_s"].values
    values = np.concatenate([poly[:, :10] + late, poly[:, 10:]], axis=1)
    fine = _check(tmp_path, times, states["sv"].values, values, nav, states)
    coarse = _check(tmp_path, times, states["sv"].values, values, nav, states, fmt="{:.4e}")
    assert abs(fine["G"]["lag_s"] - lag_s) < 0.005 and fine["G"]["lag_at_reception_detectable"]
    assert not coarse["G"]["lag_at_reception_detectable"]   # a 5-digit table cannot show a 0.3 ps effect
    assert coarse["G"]["status"] == "as specified"


def test_every_fault_signature_is_described():
    assert {"periodic_term_on_glonass", "wrong_f_or_mu", "eccentric_anomaly_at_reception",
            "missing_week_crossover"} <= FAULT_SIGNATURES.keys()
    assert "7.3e-8" in FAULT_SIGNATURES["wrong_f_or_mu"]
    assert all(len(text) > 60 for text in FAULT_SIGNATURES.values())


def test_a_table_of_another_day_is_refused(tmp_path):
    times, nav, states, _truth, _ = _constellation()
    df = read_receiver_clocks(_write(tmp_path / "rx.csv", times[:3], states["sv"].values[:2],
                                     np.ones((3, 2)) * 1e-4))
    df["time"] = df["time"] + np.timedelta64(2, "D")
    from gnssrel.errors import NoDataError
    states_late = states.assign_coords(time=states["time"].values + np.timedelta64(2, "D"))
    states_late["clock_poly_s"][:] = np.nan
    with pytest.raises(NoDataError, match="same day"):
        check_receiver_clocks(df, nav, states=states_late)
