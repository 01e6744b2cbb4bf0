"""Phase II: new data judged against frozen limits.

Owns following a data file that grows (reading only the appended bytes, noticing a rewrite or a
rotation), merging the new rows into the dataset read so far, and judging the new subgroups with
the case's rules — the same result as a full ``analyse()``.

Modules (import them directly; this package imports nothing on its own):

* ``follow`` — ``Follower``: the appended bytes of a growing file.
* ``rows``   — appended rows merged into the dataset.
* ``judge``  — ``extend``, ``new_signals``, ``Watch``: new subgroups judged, a case watched.
"""

__all__ = ["follow", "rows", "judge"]
