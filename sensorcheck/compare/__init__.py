"""Comparing two revisions of a board: what each sensor gains or loses (``sensorcheck compare``).

:mod:`.sides` reads a revision (folder, .zip, JSON report, git revision); :mod:`.match` pairs the
sensors of two revisions; :mod:`.changes` says what changed for each and applies the gate.  The
reports are in :mod:`sensorcheck.report` (``compare_text``, ``compare_json``,
``compare_markdown``, ``compare_html``); the command in :mod:`sensorcheck.commands.compare`.
"""
