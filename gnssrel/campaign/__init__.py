"""Campaigns: many receivers and many days in one run, on this machine or a Dask cluster.

:mod:`~gnssrel.campaign.plan` groups the inputs into station-days, :mod:`~gnssrel.campaign.task`
audits one station-day with the library's stages, :mod:`~gnssrel.campaign.run` runs them on
dask.distributed, resumes an earlier run and gathers the campaign table and summary.
"""
