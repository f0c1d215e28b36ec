"""The survey report: the whole job on a survey, written as one self-contained HTML file.

- :mod:`profiles.report.job`: :func:`~profiles.report.job.run_survey` runs every analysis the
  report shows by calling the library, and returns the results objects;
- :mod:`profiles.report.sections`: one small function per section of the report;
- :mod:`profiles.report.summary`: what was found and what needs attention, and ``summary.json``;
- :mod:`profiles.report.html`: escaped text, tables and embedded figures;
- :mod:`profiles.report.build`: the page from the template (``report.html``, ``report.css``,
  package data) and every file beside it.

``profiles report`` and ``profiles demo`` (``profiles/commands/``) are thin over these.
"""
