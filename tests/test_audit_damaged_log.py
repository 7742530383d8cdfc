"""A damaged epoch in the middle of a log is skipped and counted in the audit summary, not lost silently."""

from conftest import SAMPLE_LOGS

import gnssrel
from gnssrel.audit.summary import audit_log, audit_summary

OBS = SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_30S_MO.rnx"
NAV = SAMPLE_LOGS / "KVRP00ZZZ_R_20251621000_03H_MN.rnx"


def test_damaged_epoch_is_counted_in_the_summary(tmp_path):
    lines = OBS.read_text().splitlines(keepends=True)
    epochs = [i for i, ln in enumerate(lines) if ln.startswith(">")]
    bad = epochs[30]
    lines[bad] = lines[bad][:2] + "20X5" + lines[bad][6:]           # garbled year in epoch 31
    damaged = tmp_path / "damaged.rnx"
    damaged.write_text("".join(lines[:epochs[60]]))                # the first 60 epochs
    obs = gnssrel.read_observations(damaged)
    summary = audit_summary(audit_log(obs, gnssrel.read_navigation(NAV)))
    log = summary["observations"]
    assert log["skipped_epochs"] == 1 and log["skipped_epoch_lines"] == [bad + 1]
    assert log["epochs_in_file_read"] == 59
    assert summary["observations"]["n_epochs"] == 59
