"""PDF documents of rfsafe: the station worksheet and the building blocks other documents reuse.

- :mod:`rfsafe.report.worksheet`: ``build_worksheet_pdf(result) -> bytes`` and
  ``write_worksheet(result, path, force=False)`` for an :class:`rfsafe.results.EvaluationResult`;
- :mod:`rfsafe.report.common`: fonts, styles, tables, identity block and verdict box, cautions,
  sign-off, the invariant document set-up (``build_pdf``) and number formats;
- :mod:`rfsafe.report.plots` and :mod:`rfsafe.report.figures`: vector plots (reportlab.graphics);
- :mod:`rfsafe.report.maps`, :mod:`rfsafe.report.plan_map` and :mod:`rfsafe.report.near_field`: the
  station plan and the near-field maps, reportlab drawings over one raster of the cells (the
  worksheet does not load matplotlib; the site review's map, :mod:`rfsafe.report.site_map`, does).

Nothing here is imported by ``rfsafe --help``: reportlab loads only when a document is built.
"""
