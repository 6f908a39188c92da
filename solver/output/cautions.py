"""The general caution, in one place: reports, --help and README carry it (no heavy imports here).

On the terminal it follows a report only when a supply or the signal exceeds the
extra-low-voltage limits (:func:`solver.output.report.closing_lines`).
"""
CAUTION = ("Small-signal results are linear estimates around one operating point, not a safety "
           "assessment. Mains and high-voltage work follows local codes and licensed practice.")
