"""What several screens share (not a screen: the leading underscore keeps it out of
screen discovery).

* :mod:`.view` — the shared view model: problems in the dashboard's words, picking a
  series (or the total of like series) and an index, option builders, the workspace's
  fiscal year and period fields, result frequency, base period, the deflators that can
  serve (with reasons), the comparison under several deflators, the outlay-rate box,
  number helpers. Plain functions over the engine, tested in
  ``tests/test_view_shared.py``.
* :mod:`.callbacks` — callbacks several screens register with their own ids
  (:func:`~.callbacks.register_base_follows_series`,
  :func:`~.callbacks.register_frequency_options`,
  :func:`~.callbacks.register_period_placeholders`).

Screens import from here, never from each other (tests/test_architecture.py). Something a
second screen needs moves here from the first screen's ``view.py``.
"""
