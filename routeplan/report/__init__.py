"""The calculation report: design basis, results, worked calculations and charts of a plan
(``report.html`` in every plan folder; ``routeplan report OUT --pdf FILE``)."""
