"""The layout size limit (loader.MAX_LAYOUT_BYTES): a large real plan fits under it, a file
over it is refused before it is read, and the README states the same limit."""

from __future__ import annotations

import re
import sys
from pathlib import Path

import pytest

from benchcheck.loader import MAX_LAYOUT_BYTES, load_bytes, load_path, load_text
from benchcheck.model import LayoutError

ROOT = Path(__file__).resolve().parents[1]


def _bench_plan(n: int) -> str:
    sys.path.insert(0, str(ROOT / "benchmarks"))
    try:
        from bench_load import bench_plan
    finally:
        sys.path.remove(str(ROOT / "benchmarks"))
    return bench_plan(n)


def test_a_plan_of_5000_optics_is_well_under_the_limit_and_loads():
    text = _bench_plan(5000)
    size = len(text.encode("utf-8"))
    assert size < 0.8 * MAX_LAYOUT_BYTES, size        # the README and the message say "about 0.7 MiB"
    assert 0.6 * 2**20 < size < 0.8 * 2**20
    layout = load_text(text, "plan.toml")
    assert len(layout.optics) == 5000 and len(layout.beams) == 100


def test_bytes_over_the_limit_are_refused_with_the_reason(tmp_path):
    data = b"# " + b"x" * MAX_LAYOUT_BYTES + b"\nformat = 1\n"
    with pytest.raises(LayoutError) as info:
        load_bytes(data, "rev:plan.toml")
    msg = str(info.value)
    assert msg.startswith(f"rev:plan.toml: error: is {len(data):,} bytes; layouts larger than 1 MiB are not read "
                          f"({MAX_LAYOUT_BYTES:,} bytes; "), msg
    assert "5,000 optics" in msg
    big = tmp_path / "plan.toml"
    big.write_bytes(data)
    with pytest.raises(LayoutError) as info:
        load_path(big)
    assert str(info.value) == msg.replace("rev:plan.toml", str(big))


def test_a_file_at_the_limit_is_read():
    pad = MAX_LAYOUT_BYTES - len(b"format = 1\n") - 1
    data = b"#" + b"x" * (pad - 1) + b"\nformat = 1\n"
    assert len(data) == MAX_LAYOUT_BYTES
    with pytest.raises(LayoutError) as info:      # it is read: the error is about its content
        load_bytes(data, "edge.toml")
    assert "needs a [bench] table" in str(info.value)


def test_the_readme_states_the_limit():
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    found = re.search(r"a layout is a regular UTF-8 text file of at most (\d+) MiB", readme)
    assert found and int(found.group(1)) * 2**20 == MAX_LAYOUT_BYTES
