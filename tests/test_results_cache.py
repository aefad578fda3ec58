"""The dashboard's result cache (dashboard/results.py): answers kept by workspace version
and choices, shared through diskcache; off at 0 MB; a broken cache is passed over.
Common practice for memoisation; no outside source."""

from __future__ import annotations

from pathlib import Path

from dashboard.results import ResultCache, cache_key
from pipeline.settings import Settings


def test_key_is_stable_and_order_free_for_dicts():
    a = cache_key(("real.outputs", "ws", 3, {"b": [1, 2], "a": None}))
    b = cache_key(("real.outputs", "ws", 3, {"a": None, "b": (1, 2)}))
    assert a == b
    assert a != cache_key(("real.outputs", "ws", 4, {"a": None, "b": (1, 2)}))


def test_an_answer_is_computed_once_and_shared_by_another_worker(tmp_path: Path):
    settings = Settings(data_dir=str(tmp_path))
    calls = []

    def compute():
        calls.append(1)
        return {"title": "kept"}

    first = ResultCache(settings)
    assert first.get_or_compute(("x", 1), compute) == {"title": "kept"}
    second = ResultCache(settings)  # another process: the same folder
    assert second.get_or_compute(("x", 1), compute) == {"title": "kept"}
    assert calls == [1]
    assert second.get_or_compute(("x", 2), compute) == {"title": "kept"}
    assert calls == [1, 1]


def test_zero_megabytes_turns_it_off(tmp_path: Path):
    cache = ResultCache(Settings(data_dir=str(tmp_path), result_cache_mb=0))
    calls = []
    for _ in range(2):
        cache.get_or_compute(("x",), lambda: calls.append(1) or 7)
    assert calls == [1, 1] and not (tmp_path / "results").exists()


def test_a_broken_cache_is_passed_over(tmp_path: Path):
    cache = ResultCache(Settings(data_dir=str(tmp_path)))

    class Broken:
        def get(self, *_a):
            raise OSError("disk gone")

        def set(self, *_a):
            raise OSError("disk gone")

    cache._backend = Broken()
    assert cache.get_or_compute(("x",), lambda: 5) == 5
