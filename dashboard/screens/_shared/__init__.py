"""What several screens share (not a screen: the leading underscore keeps it out of
screen discovery).

* :mod:`.view` — the shared view model: problems in the dashboard's words, picking a
  series (or the total of like series) and an index, option builders, result frequency,
  base period, the span several deflators cover, the spread under several deflators,
  number helpers. Plain functions, tested in ``tests/dashboard/test_shared_view.py``.
* :mod:`.callbacks` — callbacks several screens register with their own ids
  (:func:`~.callbacks.register_base_follows_series`,
  :func:`~.callbacks.register_frequency_options`).

Screens import from here, never from each other (tests/test_architecture.py). Something a
second screen needs moves here from the first screen's ``view.py``.
"""
