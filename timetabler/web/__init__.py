"""The local web page (``timetabler serve``): upload, counts, solve, downloads — all on this computer.

The application is built by :func:`timetabler.web.app.create_app`. This package's
``__init__`` imports nothing, so the solver's child process (:mod:`timetabler.web.jobs`)
starts without loading the web framework.
"""
