"""The compatibility benchmark runs and exercises every verdict (its timing is not judged here)."""

from __future__ import annotations

from bench import compatibility


def test_the_benchmark_mix_reaches_pass_warn_and_fail() -> None:
    result = compatibility.run(n=300, repeats=1)
    verdicts = result["verdicts"]
    assert isinstance(verdicts, dict)
    assert set(verdicts) == {"pass", "warn", "fail"}
    assert sum(verdicts.values()) == 300
