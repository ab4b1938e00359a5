"""recordscan.fleet — the arc-parameter database and what it says about the fleet.

- :mod:`~recordscan.fleet.store`: ``open_store(url_or_path)`` → :class:`Store` (ingest scan
  results idempotently by sha256, query events and fits with filters);
- :mod:`~recordscan.fleet.schema`: tables and step-by-step migrations;
- :mod:`~recordscan.fleet.survival`: Kaplan–Meier extinction-time statistics with censoring;
- :mod:`~recordscan.fleet.deadtime`: dead-time evidence beside the rules of thumb;
- :mod:`~recordscan.fleet.trend`: extinction time against secondary-arc current;
- :mod:`~recordscan.fleet.report`, :mod:`~recordscan.fleet.figures`: the HTML fleet report.

Modules are imported on use; this package imports nothing heavy.
"""
