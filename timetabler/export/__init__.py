"""Reports: turn problems and results into files people open.

* :mod:`.workbook` — :func:`~.workbook.write_workbook`, the published ``.xlsx`` workbook;
* :mod:`.csv_folder` — the same lists as CSV files;
* :mod:`.icalendar_files` — RFC 5545 calendars of the exam period and of each attendee;
* :mod:`.count_chart` — a PNG chart of the number of clash-free timetables against slots;
* :mod:`.pseudonyms` — stable keyed pseudonyms for attendee identifiers;
* :mod:`.tables` — the figures every output shows, computed once;
* :mod:`.safe_write` — temporary file and rename; never over the input.

Exporters take model objects and result objects and never solve; the engines' results
are read through their documented fields only.
"""
