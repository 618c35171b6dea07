"""A bounded fuzz run of ``benchcheck check`` with a fixed seed (benchmarks/fuzz_layouts.py
runs more): every mutated demo layout ends with exit status 0, 1 or 2, no traceback, no
internal error, and the file left as it was."""

from __future__ import annotations

import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "benchmarks"))

import fuzz_layouts  # noqa: E402


def test_mutated_demo_layouts_end_cleanly(tmp_path, monkeypatch):
    monkeypatch.setenv("BENCHCHECK_NO_ENTRY_POINTS", "1")
    bad = fuzz_layouts.fuzz(60, seed=9, folder=tmp_path)
    assert not bad, "\n\n".join("; ".join(found) + "\n" + text[:800] for text, found in bad[:3])


def test_the_mutations_change_the_layouts():
    import random
    rng = random.Random(1)
    text = (Path(__file__).resolve().parents[1] / "layouts" / "two-mirror.toml").read_text(encoding="utf-8")
    assert sum(fuzz_layouts.mutate(text, rng) != text for _ in range(20)) >= 15
