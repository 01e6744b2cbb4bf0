"""The case file: an investigation's hash-chained trail of events, and its replay.

Owns the events and their replay into a ``CaseState`` (the state *is* the replay — there is no second
copy), the file format (canonical JSON, the hash chain, the data reference), writing to disk safely,
verifying a file end to end, the ``Case`` class a session holds, and the review report.

Modules (import them directly; this package imports nothing on its own):

* ``events``    — ``Event``, ``CaseState``, ``replay``, ``apply``.
* ``payload``   — payload parsing and the trail in plain words.
* ``format``    — canonical JSON, event hashes, the data reference and its fingerprint.
* ``disk``      — atomic write, the previous version (``.bak``), the writer's lock.
* ``integrity`` — ``verify``: the whole file checked without changing anything.
* ``casefile``  — ``Case``: open, append, close.
* ``review``    — the case report (text, Markdown, JSON) a reviewer reads and signs.
"""

__all__ = ["events", "payload", "format", "disk", "integrity", "casefile", "review"]
