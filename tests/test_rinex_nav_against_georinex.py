"""gnssrel's navigation reader against georinex 1.16 (the reference reader), field by field.

Reference: ``georinex.load`` on the real files in refdata (status: reference
library output in the same run).  georinex keeps each record's epoch in the
file's own time scale and its fields as written (GLONASS km -> m as we do), so
every value must agree exactly; only the epoch needs the file-scale offset
(BDT = GPST - 14 s; GLONASS UTC = GPST - leap seconds).

Known defect of georinex 1.16.2: for mixed RINEX 3 files with blank spare fields
(MOJN 2020-177, NYA1 2024-124 EN/CN) it returns NaN for every Galileo and BeiDou
record and only logs it.  We compare where georinex has values and check those
systems against the file text in test_rinex_nav_text.py.
"""

from __future__ import annotations

import logging

import numpy as np
import pytest
from conftest import refdata_file

from gnssrel import timescales as ts
from gnssrel.io.rinex_nav import read_navigation

georinex = pytest.importorskip("georinex")
pytestmark = pytest.mark.filterwarnings("ignore::FutureWarning")  # georinex/xarray merge defaults

# georinex variable -> gnssrel column, per system.
_KEPLER = {
    "SVclockBias": "clock_bias_s", "SVclockDrift": "clock_drift_s_per_s",
    "SVclockDriftRate": "clock_drift_rate_s_per_s2", "Crs": "crs_m", "DeltaN": "delta_n_rad_per_s",
    "M0": "mean_anomaly_rad", "Cuc": "cuc_rad", "Eccentricity": "eccentricity", "Cus": "cus_rad",
    "sqrtA": "sqrt_a_sqrt_m", "Toe": "toe_sow_s", "Cic": "cic_rad", "Omega0": "omega0_rad",
    "Cis": "cis_rad", "Io": "inclination_rad", "Crc": "crc_m", "omega": "perigee_argument_rad",
    "OmegaDot": "omega_dot_rad_per_s", "IDOT": "idot_rad_per_s", "TransTime": "transmission_sow_s",
}
GEORINEX_NAMES = {
    "G": {**_KEPLER, "IODE": "iode", "CodesL2": "l2_codes", "GPSWeek": "week", "L2Pflag": "l2p_data_flag",
          "SVacc": "accuracy_m", "health": "health", "TGD": "tgd_s", "IODC": "iodc",
          "FitIntvl": "fit_interval_h"},
    "J": {**_KEPLER, "IODE": "iode", "CodesL2": "l2_codes", "GPSWeek": "week", "L2Pflag": "l2p_data_flag",
          "SVacc": "accuracy_m", "health": "health", "TGD": "tgd_s", "IODC": "iodc",
          "FitIntvl": "fit_interval_flag"},
    "E": {**_KEPLER, "IODnav": "iode", "DataSrc": "data_sources", "GALWeek": "week",
          "SISA": "accuracy_m", "health": "health", "BGDe5a": "bgd_e5a_e1_s", "BGDe5b": "bgd_e5b_e1_s"},
    "C": {**_KEPLER, "AODE": "iode", "BDTWeek": "week", "SVacc": "accuracy_m", "SatH1": "health",
          "TGD1": "tgd1_b1_b3_s", "TGD2": "tgd2_b2_b3_s", "AODC": "aodc"},
    "R": {"SVclockBias": "clock_bias_s", "SVrelFreqBias": "relative_frequency_bias",
          "MessageFrameTime": "message_frame_time_s", "X": "x_m", "dX": "vx_m_per_s",
          "dX2": "ax_m_per_s2", "health": "health", "Y": "y_m", "dY": "vy_m_per_s",
          "dY2": "ay_m_per_s2", "FreqNum": "frequency_channel", "Z": "z_m", "dZ": "vz_m_per_s",
          "dZ2": "az_m_per_s2", "AgeOpInfo": "age_days"},
}


def _file_epoch(letter, table, leap_seconds):
    if letter == "C":
        return ts.from_gpst(table["toc"].to_numpy(), "BDT")
    if letter == "R":
        return ts.from_gpst(table["toc"].to_numpy(), "UTC", leap_seconds)
    return table["toc"].to_numpy()


def compare(nav, ds, letter):
    """Compare every georinex value of ``letter``; return (records compared, records of ours)."""
    table = nav.ephemerides[letter].sort_values("line")
    epoch = _file_epoch(letter, table, nav.header["leap_seconds"])
    # georinex names the k-th repeat of (sv, epoch) "G01_k" (in file order).
    repeat = table.assign(time=epoch).groupby(["sv", "time"]).cumcount().to_numpy()
    key_sv = [s if k == 0 else f"{s}_{k}" for s, k in zip(table["sv"], repeat)]
    ours = table.assign(time=epoch, key_sv=key_sv).set_index(["time", "key_sv"])
    mapping = GEORINEX_NAMES[letter]
    theirs_all = ds[list(mapping)].to_dataframe()
    theirs_all = theirs_all[theirs_all.index.get_level_values("sv").str[0] == letter]
    theirs = theirs_all.dropna(subset=["SVclockBias"])
    assert len(theirs), f"georinex has no {letter} record to compare"
    theirs.index = theirs.index.set_names(["time", "key_sv"])
    theirs = theirs.add_prefix("georinex_")
    joined = theirs.join(ours, how="left")
    missing = joined["sv"].isna()
    assert not missing.any(), f"records georinex has and we lack: {list(joined.index[missing])[:5]}"
    for gname, column in mapping.items():
        expected = joined["georinex_" + gname].to_numpy(dtype=float)
        got = joined[column].to_numpy(dtype=float)
        both = np.isfinite(expected)
        # georinex reads a blank field as 0 ("or 0"); we give NaN.
        blank_here = ~np.isfinite(got) & both
        assert np.all(expected[blank_here] == 0.0), f"{letter} {column}: NaN where georinex has a value"
        ok = both & np.isfinite(got)
        assert np.array_equal(expected[ok], got[ok]), f"{letter} {column} differs from georinex {gname}"
    return len(theirs), len(table)


SINGLE_FILES = [
    ("2021-001/cbw10010.21n.gz", "G"),
    ("2018-210/ab422100.18n", "G"),
    ("2018-210/ceda2100.18e", "E"),
    ("2018-210/p1462100.18g", "R"),
    ("2018-210/CEDA00USA_R_20182100000_01D_MN.rnx.gz", "E"),
    pytest.param("2018-210/ELKO00USA_R_20182100000_01D_MN.rnx.gz", "GECR", marks=pytest.mark.slow),
    ("2024-124/NYA100NOR_S_20241240000_01D_GN.rnx.gz", "G"),
]


@pytest.mark.refdata
@pytest.mark.parametrize("relative,letters", SINGLE_FILES)
def test_every_field_matches_georinex(relative, letters, caplog):
    path = refdata_file(relative)
    with caplog.at_level(logging.ERROR):
        ds = georinex.load(path)
    nav = read_navigation(path)
    assert nav.systems == letters
    for letter in letters:
        n_compared, n_ours = compare(nav, ds, letter)
        assert n_compared == n_ours


@pytest.fixture(scope="module")
def mojn():
    path = refdata_file("2020-177/MOJN00DNK_R_20201770000_01D_MN.rnx.gz")
    # Restricted to the systems georinex reads in this file (its E/C records are all NaN).
    return read_navigation(path), georinex.load(path, use={"G", "R", "J"})


@pytest.mark.refdata
@pytest.mark.parametrize("letter", ["G", "R", "J"])
def test_mixed_day_matches_georinex(mojn, letter):
    nav, ds = mojn
    n_compared, n_ours = compare(nav, ds, letter)
    assert n_compared == n_ours
    # Counts of records in the file (grep '^G' etc. on the body: 240 G, 464 R, 20 J).
    assert n_ours == {"G": 240, "R": 464, "J": 20}[letter]


@pytest.mark.refdata
def test_georinex_defect_is_still_there_and_we_have_values(mojn, caplog):
    """Documents why E/C are checked against text: georinex has no E value, we have all."""
    path = refdata_file("2024-124/NYA100NOR_S_20241240000_01D_EN.rnx.gz")
    with caplog.at_level(logging.ERROR):
        ds = georinex.load(path)
    assert not np.isfinite(ds["SVclockBias"].to_numpy()).any()
    nav = read_navigation(path)
    assert np.isfinite(nav.ephemerides["E"]["clock_bias_s"]).all()
    assert np.isfinite(nav.ephemerides["E"]["sqrt_a_sqrt_m"]).all()
