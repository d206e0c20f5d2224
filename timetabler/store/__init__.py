"""The local store: inputs, results and published timetables kept between runs, in SQLite.

* :mod:`.location` — where the store lives (the user's data folder, ``--store``, ``TIMETABLER_STORE``);
* :mod:`.schema` — the tables, the schema version (``PRAGMA user_version``) and its upgrades;
* :mod:`.records` — :class:`~.records.Store`: record a solve, publish a timetable under a label,
  list, read back and forget what is kept, and delete what is older than the retention period;
* :mod:`.changes` — what changed between two published versions, event by event and attendee
  by attendee (no I/O: it compares two :class:`~.records.PublishedVersion` objects).

Every record is one SQLite transaction, so a process killed half-way leaves the earlier
records intact and the half-written one absent. The interfaces (command line, web page)
call this package; the engines never do.
"""

from .changes import Changes, changes_between
from .location import STORE_ENV, default_store_path, store_path
from .records import PublishedVersion, Store, StoredInput, StoredRun

__all__ = ["Store", "StoredInput", "StoredRun", "PublishedVersion", "Changes", "changes_between",
           "default_store_path", "store_path", "STORE_ENV"]
