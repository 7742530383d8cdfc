"""Regression tests for what the hostile-input campaign found (tests/hostile; README "Nothing lost, nothing silently wrong").

Each test rebuilds the finding on a minimal input written to tmp_path: a crash, a message
without the file name, a value a strict reading of the format refuses but that was read, or
a numpy warning reaching the terminal.  The campaign case that showed it is named beside
each test (``python -m tests.hostile --replay SEED:INDEX``).
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from obs_samples import rinex2, rinex3
from test_rinex_clock_damage import _lines as clock_lines
from test_rinex_clock_damage import _read as read_clock
from test_rinex_nav_bad_input import HEADER3, RECORD
from test_sp3_damage import _lines as sp3_lines
from test_sp3_damage import _read as read_sp3_lines

from gnssrel.accounting import Ledger
from gnssrel.audit.relativity_fit import DETERMINED_SIGMA, fit_periodic_factor
from gnssrel.errors import FileFormatError
from gnssrel.io.receiver_clocks import read_receiver_clocks
from gnssrel.io.receiver_fixes import nmea_checksum, read_nmea_gga
from gnssrel.io.rinex_nav import read_navigation
from gnssrel.io.rinex_obs import read_observations


def _obs(tmp_path, text, **kw):
    path = tmp_path / "obs.rnx"
    path.write_text(text)
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)   # no numpy warning may reach the terminal
        ds = read_observations(path, **kw)
    ledger = Ledger.from_dict(ds.attrs["accounting"])
    assert ledger.unbalanced() == []
    return path, ds, ledger


# ------------------------------------------------------------------ observation files
def test_rinex3_obs_cut_inside_the_observation_types_is_one_error_naming_file_and_line(tmp_path):
    # --replay 1:614 (was IndexError in _to_dataset).  RINEX 3.05 table A2: the header ends
    # with END OF HEADER; a file cut before it cannot be read.
    head, _ = rinex3()
    lines = head.splitlines(True)
    cut = next(i for i, line in enumerate(lines) if "SYS / # / OBS TYPES" in line) + 1
    path = tmp_path / "cut.rnx"
    path.write_text("".join(lines[:cut]) + lines[cut][:12])
    with pytest.raises(FileFormatError) as err:
        read_observations(path)
    assert str(err.value.path) == str(path) and err.value.line == cut + 1
    assert "no END OF HEADER" in str(err.value) and "\n" not in str(err.value)


@pytest.mark.parametrize("new, why", [
    ("G00", "satellite number 00 (no system has one)"),                 # --replay 2:26
    ("G 7", "blank in the satellite number (RINEX 3 writes G05)"),      # --replay 1:486, 1:1258
    ("G05", "the satellite appears twice in its epoch")])
def test_rinex3_obs_refuses_a_satellite_id_that_cannot_be(tmp_path, new, why):
    # RINEX 3.05 table A13: satellite number A1,I2.2 (G07, never G 7); PRNs and slots start at 1.
    head, body = rinex3()
    path, ds, ledger = _obs(tmp_path, head + body.replace("G07", new, 1))
    # the first epoch (line 10 of the file, G07 on line 12) is skipped and counted, the rest read
    assert ds.sizes["time"] == 5
    assert ledger.count("epochs", "-", "damaged") == 1
    assert f"{path}:10: damaged epoch skipped" in ledger.warnings
    assert f"{path}:12: satellite id {new!r} refused: {why}; its epoch is skipped" in ledger.warnings
    assert "G00" not in ds.sv.values
    # G07 is read at every other epoch, with its own values (obs_samples.value(e, k=1, j=0))
    np.testing.assert_array_equal(ds["C1C"].sel(sv="G07").values, 20_000_000.0 + 1000.0 * np.arange(1, 6) + 10.125)


def test_rinex2_obs_refuses_satellite_number_00(tmp_path):
    head, body = rinex2()
    path, ds, ledger = _obs(tmp_path, head + body.replace("G07", "G00", 1))
    assert ds.sizes["time"] == 5 and ledger.count("epochs", "-", "damaged") == 1
    assert "G00" not in ds.sv.values
    line = next(i for i, text in enumerate((head + body).splitlines(), 1) if "G07" in text)
    assert f"{path}:{line}: satellite id 'G00' refused: satellite number 00 (no system has one); " \
           "its epoch is skipped" in ledger.warnings


def test_underscore_in_an_observation_the_command_does_not_use_is_refused(tmp_path):
    # --replay 1:96: obs3 phase 126538227.540 -> 1265382_7.540 was read silently.  The L1C field
    # of G05 in the first epoch gets an underscore; only C1C is asked for.
    head, body = rinex3()
    lines = body.splitlines(True)
    assert lines[1].startswith("G05")
    lines[1] = lines[1][:3 + 16 + 7] + "_" + lines[1][3 + 16 + 8:]
    _, ds, ledger = _obs(tmp_path, head + "".join(lines), observables=["C1C"])
    assert ds.sizes["time"] == 5 and ledger.count("epochs", "-", "damaged") == 1
    assert ds["time"].values[0] == np.datetime64("2021-01-01T00:00:30")


def test_damaged_value_of_a_system_not_requested_is_said(tmp_path):
    # --replay 3:1356, 3:1342, 3:1580: '_', NaN in a Galileo record with --systems G went unsaid.
    # Such records are not decoded (only their pseudoranges counted): said, not read.
    head, body = rinex3()
    lines = body.splitlines(True)
    k = next(i for i, line in enumerate(lines) if line.startswith("E11"))
    lines[k] = lines[k][:3 + 16 + 4] + "_" + lines[k][3 + 16 + 5:]
    path, ds, ledger = _obs(tmp_path, head + "".join(lines), systems="G")
    assert ds.sizes["time"] == 6 and list(ds.sv.values) == ["G05", "G07"]
    line = head.count("\n") + k + 1
    assert ledger.warnings == [(f"{path}:{line}: a record of a system not requested holds a field that "
                                "is no number (not read)")]
    assert ledger.count("observations", "E", "system not requested") == 6


def test_phase_shift_header_value_with_an_underscore_is_said(tmp_path):
    # --replay 3:654: SYS / PHASE SHIFT '0.00000' -> '0.00_00' went unsaid (gnssrel does not use it)
    shift = "G L1C  0.00_00".ljust(60) + "SYS / PHASE SHIFT"
    head, body = rinex3(extra_header=[shift + "\n"])
    path, ds, ledger = _obs(tmp_path, head + body)
    assert ds.sizes["time"] == 6
    line = head.splitlines().index(shift) + 1
    assert ledger.warnings == [(f"{path}:{line}: SYS / PHASE SHIFT value '0.00_00' (columns 7-14) is not a "
                                "number; not used")]


def test_seconds_field_of_nines_is_refused_without_a_numpy_warning(tmp_path):
    # --replay 1:515: "invalid value encountered in cast" (rinex_obs_fields.seconds_field_ns)
    head, body = rinex3()
    damaged = body.replace("> 2021 01 01 00 00 30.0000000", "> 2021 01 01 00 00 " + "9" * 11, 1)
    _, ds, ledger = _obs(tmp_path, head + damaged)   # _obs turns RuntimeWarning into an error
    assert ds.sizes["time"] == 5 and ledger.count("epochs", "-", "damaged") == 1


# ------------------------------------------------------------------ the k fit of audit
def test_k_fit_whose_outlier_rejection_would_leave_nothing_is_undetermined():
    # --replay 1:486 (was ValueError "zero-size array" in relativity_fit._solve): one residual of
    # 387 km (another satellite's pseudorange under G01's name) left every other residual equal,
    # so the robust sigma (1.4826 MAD) was 0 and the rejection took every observation away.
    # Minimal form: 6 epochs x 3 satellites, noise-free, one outlier of 1 km.
    epoch = np.repeat(np.arange(6), 3)
    sv = np.tile(["G01", "G02", "G03"], 6)
    x = np.where(epoch == 0, np.tile([1.0, -1.0, 0.0], 6), 0.0)
    y = np.zeros(epoch.size)
    y[0] = 1000.0
    fit = fit_periodic_factor(y, x, epoch, sv)
    assert fit["n_obs"] == 18 and fit["n_sat"] == 3 and np.isfinite(fit["k"])
    assert fit["sigma"] > DETERMINED_SIGMA      # so relativity_k reports "undetermined: sigma ..."


# ------------------------------------------------------------------ SP3
def test_sp3_refuses_satellite_number_00(tmp_path):
    # --replay 1:1121: a G00 record was read as a satellite of its own
    lines = sp3_lines()
    k = next(i for i, line in enumerate(lines) if line.startswith("PG01"))
    lines[k] = "PG00" + lines[k][4:]
    path, ds, ledger = read_sp3_lines(tmp_path, lines)
    assert "G00" not in ds.sv.values
    assert ledger.count("sp3_records", "G", "satellite number 00") == 1
    assert ledger.count("sp3_records", "G", "used") == 4
    assert f"{path}:{k + 1}: SP3 record skipped: satellite number 00" in ledger.warnings


def test_sp3_refuses_a_position_no_gnss_orbit_reaches(tmp_path):
    # --replay 2:1690: -3170.194196 -> 83170.194196 km was read (and numpy warned in
    # relativity/clock_terms.py).  GNSS orbits lie 25 500-45 300 km from the geocentre.
    lines = sp3_lines()
    k = next(i for i, line in enumerate(lines) if line.startswith("PE11"))
    lines[k] = lines[k][:32] + f"{83170.194196:14.6f}" + lines[k][46:]
    path, ds, ledger = read_sp3_lines(tmp_path, lines)
    assert ledger.count("sp3_records", "E", "position outside physical range") == 1
    assert f"{path}:{k + 1}: SP3 record skipped: position outside physical range" in ledger.warnings
    assert np.isnan(ds["position_ecef_m"].sel(sv="E11").isel(time=0).values).all()
    r = np.linalg.norm(ds["position_ecef_m"].values, axis=-1)
    assert np.nanmax(r) < 50_000e3


def _orbit_lines(n_epochs=12, garble=None):
    """An SP3-c file of one satellite on a circular orbit (radius 26 560 km, inclination 55 deg,
    Kepler's third law), ECEF = inertial turned by the Earth's rotation; ``garble`` = (epoch, km)
    adds km to that epoch's z."""
    gm, omega_e, r = 3.986004418e14, 7.292115e-5, 26_560e3
    n = np.sqrt(gm / r**3)
    lines = sp3_lines(n_epochs)[:7]
    lines[2] = "+    1   G01" + "  0" * 16
    for e in range(n_epochs):
        t = 900.0 * e
        u, inc, th = n * t, np.radians(55.0), omega_e * t
        x, y, z = r * np.cos(u), r * np.sin(u) * np.cos(inc), r * np.sin(u) * np.sin(inc)
        xe, ye = x * np.cos(th) + y * np.sin(th), -x * np.sin(th) + y * np.cos(th)
        z_km = z / 1e3 + (garble[1] if garble and garble[0] == e else 0.0)
        lines.append(f"*  2020  6 25 {15 * e // 60:2d} {15 * e % 60:2d}  0.00000000")
        lines.append(f"PG01{xe / 1e3:14.6f}{ye / 1e3:14.6f}{z_km:14.6f}{100.0:14.6f}")
    return lines + ["EOF"]


@pytest.mark.parametrize("km", [-6000.0, 800.0])
def test_sp3_refuses_a_position_off_its_satellites_orbit(tmp_path, km):
    # --replay 2:1690 with -3170.19 -> -9170.19 km (inside the range): read, and numpy warned
    # "invalid value encountered in sqrt" in relativity/clock_terms.py (a hyperbolic "orbit").
    path, ds, ledger = read_sp3_lines(tmp_path, _orbit_lines(garble=(5, km)))
    assert ledger.count("sp3_records", "G", "position off the satellite's orbit") == 1
    assert ledger.count("sp3_records", "G", "used") == 11
    assert np.isnan(ds["position_ecef_m"].isel(time=5).values).all()
    assert np.isfinite(ds["position_ecef_m"].isel(time=[4, 6]).values).all()
    line = 7 + 2 * 5 + 2
    assert ledger.warnings == [f"{path}:{line}: SP3 record skipped: position off the satellite's orbit"]


def test_sp3_keeps_a_clean_orbit_and_a_garbled_last_digit(tmp_path):
    _, _, ledger = read_sp3_lines(tmp_path, _orbit_lines())
    assert ledger.count("sp3_records", "G", "used") == 12 and ledger.warnings == []
    _, _, ledger = read_sp3_lines(tmp_path, _orbit_lines(garble=(5, 0.5)), name="small.sp3")
    assert ledger.count("sp3_records", "G", "used") == 12     # 500 m: not an orbit break to tell


def test_sp3_keeps_the_absent_marker(tmp_path):
    # SP3-c section 2: 0.000000 coordinates mean "bad or absent"; with a clock the record stays.
    lines = sp3_lines()
    k = next(i for i, line in enumerate(lines) if line.startswith("PR07"))
    lines[k] = "PR07" + f"{0.0:14.6f}" * 3 + lines[k][46:]
    _, ds, ledger = read_sp3_lines(tmp_path, lines)
    assert ledger.count("sp3_records", "R", "used") == 5
    assert np.isnan(ds["position_ecef_m"].sel(sv="R07").isel(time=0).values).all()
    assert ds["clock_s"].sel(sv="R07").isel(time=0).item() == pytest.approx(102.0e-6)


def test_sp3_header_week_seconds_with_an_underscore_is_said(tmp_path):
    # --replay 1:846: '291600.00000000' -> '291600.000000_0' in the '##' line went unsaid
    lines = sp3_lines()
    lines[1] = lines[1].replace("345600.00000000", "345600.000000_0")
    path, ds, ledger = read_sp3_lines(tmp_path, lines)
    assert ds.sizes["time"] == 5
    assert any(w.startswith(f"{path}:2: SP3 header: seconds of week (columns 9-23) unreadable")
               for w in ledger.warnings), ledger.warnings


def test_sp3_header_garbled_list_id_and_base_are_said(tmp_path):
    # --replay 3:475 ('G13' -> 'G***' in a '+' line) and 3:1667 (a '%f' base -> 'nan') went unsaid
    lines = sp3_lines()
    lines[2] = lines[2].replace("E11", "E**")
    lines.insert(6, "%f  1.2500000        nan  0.00000000000  0.000000000000000")
    path, ds, ledger = read_sp3_lines(tmp_path, lines)
    assert ds.sizes["time"] == 5 and ledger.count("sp3_records", "E", "used") == 5
    assert f"{path}:3: SP3 header: satellite id 'E**' (columns 13-15) of the '+' list unreadable; " \
           "not listed" in ledger.warnings
    assert any(w.startswith(f"{path}:7: SP3 header: '%f' value 'nan' unreadable") for w in ledger.warnings)


# ------------------------------------------------------------------ messages naming the precise file
def test_too_short_precise_product_names_the_sp3_file(tmp_path):
    # --replay 1:186, 1:293, 1:1023: "the precise product has 9 epochs, fewer than the 10 ..."
    from gnssrel.errors import GnssrelInputError
    from gnssrel.orbits.precise import precise_states
    path, ds, _ = read_sp3_lines(tmp_path, sp3_lines(n_epochs=5), name="short.sp3")
    with pytest.raises(GnssrelInputError) as err:
        precise_states(ds, ds["time"].values[:2])
    assert str(err.value).startswith(f"{path}: the precise product has 5 epochs, fewer than the 10")


def test_clock_file_given_as_the_only_precise_file_is_named(tmp_path):
    # --replay 1:307: "--precise: give at least one SP3 file" named no file
    from gnssrel.errors import GnssrelInputError
    from gnssrel.pipeline.inputs import read_precise
    path = tmp_path / "orbits.sp3"
    path.write_text("\n".join(clock_lines()) + "\n")
    with pytest.raises(GnssrelInputError) as err:
        read_precise([path])
    assert str(err.value).startswith(f"{path}: --precise: read as a RINEX clock file")


def test_audit_without_positions_for_want_of_precise_orbits_names_the_sp3_file_and_gap(tmp_path):
    # --replay 1:391, 2:220: one SP3 epoch line damaged (day 0, 30 February): the reader drops the
    # epoch, interpolation finds no window, and the message named the observation file.
    import xarray as xr

    from gnssrel.errors import NoDataError
    from gnssrel.jobs.audit import check_something_computed
    lines = sp3_lines(n_epochs=12)
    k = next(i for i, line in enumerate(lines) if line.startswith("*  2020  6 25  1 30"))
    lines[k] = lines[k].replace("2020  6 25", "2020  6  0")
    path, ds, ledger = read_sp3_lines(tmp_path, lines)
    assert ledger.count("sp3_records", "G", "impossible epoch") == 1
    obs_ledger = Ledger()
    obs_ledger.read("observations", "G", 40)
    obs_ledger.drop("observations", "G", "no precise orbit or clock", 40)
    summary = {"position": {"n_epochs_solved": 0, "median_error_3d_m": None}, "relativity_k": {}}
    obs_ds = xr.Dataset(coords={"time": ds["time"].values[4:6]})
    nav = type("Nav", (), {"ephemerides": {}})()
    with pytest.raises(NoDataError) as err:
        check_something_computed(summary, obs_ledger, "log.rnx", nav, ["G"], obs_ds, {"orbits": ds})
    message = str(err.value)
    assert message.startswith(f"{path}: no epoch could be solved for a position: 40 of 40 pseudoranges of G")
    assert "(log log.rnx)" in message and "\n" not in message
    assert "its 11 epochs span 2020-06-25 00:00:00 to 02:45:00 GPST, none between " \
           "2020-06-25 01:15:00 and 01:45:00 GPST" in message


# ------------------------------------------------------------------ RINEX clock, navigation
def test_rinex_clock_refuses_satellite_number_00(tmp_path):
    # --replay 1:148, 1:1884: a G00 record was read as a satellite of its own
    lines = clock_lines()
    k = next(i for i, line in enumerate(lines) if line.startswith("AS G01"))
    lines[k] = lines[k].replace("AS G01", "AS G00")
    path, ds, ledger = read_clock(tmp_path, lines)
    assert "G00" not in ds.sv.values
    assert ledger.count("clock_records", "G", "satellite number 00") == 1
    assert f"{path}:{k + 1}: RINEX clock record skipped: satellite number 00" in ledger.warnings


@pytest.mark.parametrize("shift", [-1, 1])
def test_rinex_clock_value_off_its_columns_is_read_and_said(tmp_path, shift):
    # --replay 3:80, 3:974: a value one column left or right of its E19.12 columns was read
    # without a word (the value itself is unambiguous, so it is kept, with a warning).
    # The sigma of E11's first record, " 3.000000000000E-11" (E19.12), moved one column.
    lines = clock_lines()
    k = next(i for i, line in enumerate(lines) if line.startswith("AS E11"))
    a = lines[k].index(" 3.000000000000E-11")
    lines[k] = lines[k][:a] + lines[k][a + 1:] if shift < 0 else lines[k][:a] + " " + lines[k][a:]
    path, ds, ledger = read_clock(tmp_path, lines)
    assert ds["clock_s"].sel(sv="E11").isel(time=0).item() == -1.24e-4
    assert ds["clock_sigma_s"].sel(sv="E11").isel(time=0).item() == 3.0e-11
    assert ledger.count("clock_records", "E", "used") == 5
    assert ledger.warnings == [(f"{path}:{k + 1}: RINEX clock record: a field is off its columns; read by "
                                "its blank-separated values")]


@pytest.mark.parametrize("new, reason", [("G00", "refused: satellite number 00"),
                                         ("G 2", "damaged")])   # RINEX 3.05 table A6: A1,I2.2
def test_rinex3_nav_refuses_a_satellite_id_that_cannot_be(tmp_path, new, reason):
    path = tmp_path / "nav.rnx"
    path.write_text(HEADER3 + RECORD.replace("G02", "G03") + RECORD.replace("G02", new)
                    + RECORD.replace("G02", "G05"))
    nav = read_navigation(path)
    assert nav.accounting.unbalanced() == []
    assert list(nav.ephemerides["G"].sv) == ["G03", "G05"]
    assert nav.accounting.count("navigation_records", "G", reason) == 1


def test_navigation_header_coefficient_overflowing_to_inf_is_refused(tmp_path):
    # --replay 3:450: ION BETA 9.6256D+04 -> 1e400 was read as inf (Klobuchar coefficients)
    iono = ("GPSA   1.1176E-08  1.4901E-08 -5.9605E-08 -1.1921E-07       IONOSPHERIC CORR\n"
            "GPSB      1E400    3.2768E+04 -1.9661E+05 -1.3107E+05       IONOSPHERIC CORR\n")
    lines = HEADER3.splitlines(True)
    path = tmp_path / "nav.rnx"
    path.write_text(lines[0] + iono + "".join(lines[1:]) + RECORD)
    nav = read_navigation(path)
    assert "GPSB" not in nav.header["ionosphere"]
    assert nav.header["ionosphere"]["GPSA"][0] == pytest.approx(1.1176e-08)
    assert any(w.startswith(f"{path}:3: ") and "'1E400'" in w for w in nav.accounting.warnings), \
        nav.accounting.warnings


# ------------------------------------------------------------------ receiver tables
CLOCK_CSV = "time,time_scale,sv,clock_correction_s,flags\n" + "".join(
    f"2025-06-11T10:00:{s:02d},GPST,G05,1.0e-05,\n" for s in (0, 30))


@pytest.mark.parametrize("row, reason", [
    ("0000-06-11T10:01:00,GPST,G05,1.0e-05,", "year outside 1980-2100"),           # --replay 2:441
    ("2025-06-11T10:01:00,GPST,G00,1.0e-05,", "satellite number 00"),              # --replay 2:401
    ("2025-06-11T10:01:00,GPST,G05,1.0e-05,1e400", "flags are not words (e.g. tgd rel)"),  # 1:471
    ("2025-06-11T10:01:00,GPST,G05,1.0e-05,NaN", "flags are not words (e.g. tgd rel)"),    # 3:233
    ("2025-06-11T10:01:00,GPST,G05,1.0e-05,tgd -Inf", "flags are not words (e.g. tgd rel)")])
def test_receiver_clock_table_refuses_what_cannot_be(tmp_path, row, reason):
    path = tmp_path / "clocks.csv"
    path.write_text(CLOCK_CSV + row + "\n")
    df = read_receiver_clocks(path)
    ledger = Ledger.from_dict(df.attrs["accounting"])
    assert ledger.unbalanced() == []
    assert len(df) == 2 and ledger.count("receiver_clock_rows", "G", "used") == 2
    assert ledger.count("receiver_clock_rows", "G", reason) == 1
    assert f"{path}:4: receiver clock row refused: {reason}" in ledger.warnings


def test_receiver_clock_row_far_from_the_others_is_refused(tmp_path):
    # --replay 4:1155, 4:1183: year 2025 -> 2099 (inside 1980-2100) moved a row 74 years on.
    # precise_fields.far_off: more than 3 MAD + 6 h from the median time of the rows.
    rows = "".join(f"2025-06-11T10:{m:02d}:00,GPST,G05,1.0e-05,\n" for m in range(10))
    path = tmp_path / "clocks.csv"
    path.write_text(CLOCK_CSV.splitlines(True)[0] + rows + "2099-06-11T10:10:00,GPST,G05,1.0e-05,\n")
    df = read_receiver_clocks(path)
    ledger = Ledger.from_dict(df.attrs["accounting"])
    assert len(df) == 10 and df["time"].max() < np.datetime64("2026-01-01")
    assert ledger.count("receiver_clock_rows", "G", "time far from the table's other rows") == 1
    assert f"{path}:12: receiver clock row refused: time far from the table's other rows" in ledger.warnings


def test_receiver_clock_table_keeps_flag_words(tmp_path):
    path = tmp_path / "clocks.csv"
    path.write_text(CLOCK_CSV + "2025-06-11T10:01:00,GPST,G05,1.0e-05,tgd rel\n"
                    + "2025-06-11T10:01:30,GPST,G05,1.0e-05,info;nanosecond-fix\n")
    df = read_receiver_clocks(path)
    assert list(df["flags"]) == ["", "", "tgd rel", "info;nanosecond-fix"]


def _sentence(body):
    return f"${body}*{nmea_checksum(body):02X}"


def test_nmea_height_inf_with_a_valid_checksum_is_refused(tmp_path):
    # --replay 1:163: '24.257' -> '   INF' with the checksum recomputed was read
    zda = _sentence("GPZDA,123500.00,03,05,2024,00,00")
    good = _sentence("GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,")
    bad = _sentence("GPGGA,123520,4807.038,N,01131.000,E,1,08,0.9,   INF,M,46.9,M,,")
    path = tmp_path / "fixes.nmea"
    path.write_text(f"{zda}\n{good}\n{bad}\n")
    df = read_nmea_gga(path)
    ledger = Ledger.from_dict(df.attrs["accounting"])
    assert len(df) == 1 and df["height_m"].iloc[0] == pytest.approx(545.4 + 46.9)
    assert ledger.count("fixes", "-", "garbled field") == 1 and ledger.unbalanced() == []


def test_nmea_line_that_lost_its_dollar_is_said_and_counted(tmp_path):
    # --replay 4:807: '$GNGGA' -> '1e400' (checksum recomputed): the line was ignored without a word
    zda = _sentence("GPZDA,123500.00,03,05,2024,00,00")
    good = _sentence("GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,")
    bad = _sentence("GPGGA,123520,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,").replace("$GPGGA", "1e400")
    path = tmp_path / "fixes.nmea"
    path.write_text(f"{zda}\n{good}\n{bad}\nnot,GGA,at all\n")
    df = read_nmea_gga(path)
    ledger = Ledger.from_dict(df.attrs["accounting"])
    assert len(df) == 1 and ledger.unbalanced() == []
    assert ledger.count("fixes", "-", "not an NMEA sentence") == 1      # the line holding "GGA,"
    assert ledger.warnings == [f"{path}:{n}: line is not an NMEA sentence (no leading '$'); ignored"
                               for n in (3, 4)]
