"""Fuzz `benchcheck check` with mutated demo layouts; prints what it finds; not a test.

Each mutant is a demo layout with one to three random edits (a line dropped or doubled,
a number replaced by an extreme value or scaled, negated or nudged, a control character put into a string, a bracket
removed, the file cut short).  Every run must end with exit status 0, 1 or 2, print no
traceback and no "internal error", and leave the layout file as it was.  The suite runs a
bounded number of these with a fixed seed (tests/test_fuzz_check.py).

Run: python benchmarks/fuzz_layouts.py [count] [seed]
"""

from __future__ import annotations

import contextlib
import io
import random
import re
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
EXTREMES = ["0", "-0.0", "-1", "1e308", "-1e308", "1e-320", "nan", "inf", "-inf", "180.0", "-180.0", "179.99",
            "1" + "0" * 5000, "[]", "[1, 2, 3]", '"x"', "true", "1979-05-27", "{}"]
CONTROLS = ["\\n", "\\u001b[2J", "\\u0007", "\\r", "\\t", "\\u202e"]


def mutate(text: str, rng: random.Random) -> str:
    for _ in range(rng.randint(1, 3)):
        lines = text.split("\n")
        pick = rng.choice([0, 1, 2, 2, 2, 3, 4, 5, 6, 7, 7, 7])
        i = rng.randrange(len(lines))
        if pick == 0:
            del lines[i]
        elif pick == 1:
            lines.insert(i, lines[i])
        elif pick == 2:
            numbers = [(k, m) for k, line in enumerate(lines) for m in re.finditer(r"-?\d+(?:\.\d+)?(?:e-?\d+)?", line)]
            if numbers:
                k, m = rng.choice(numbers)
                lines[k] = lines[k][:m.start()] + rng.choice(EXTREMES) + lines[k][m.end():]
        elif pick == 3:
            strings = [(k, m) for k, line in enumerate(lines) for m in re.finditer(r'"[^"\\]*"', line)]
            if strings:
                k, m = rng.choice(strings)
                at = rng.randint(m.start() + 1, m.end() - 1)
                lines[k] = lines[k][:at] + rng.choice(CONTROLS) + lines[k][at:]
        elif pick == 4:
            brackets = [(k, m) for k, line in enumerate(lines) for m in re.finditer(r"[\[\]{}=]", line)]
            if brackets:
                k, m = rng.choice(brackets)
                lines[k] = lines[k][:m.start()] + lines[k][m.end():]
        elif pick == 5:
            j = rng.randrange(len(lines))
            lines[i], lines[j] = lines[j], lines[i]
        elif pick == 7:   # a plausible but different number: scaled, negated or nudged
            numbers = [(k, m) for k, line in enumerate(lines) for m in re.finditer(r"-?\d+\.\d+", line)]
            if numbers:
                k, m = rng.choice(numbers)
                x = float(m.group()) * rng.choice([-1.0, 0.01, 0.1, 0.5, 0.99, 1.01, 2.0, 10.0, 100.0])
                lines[k] = lines[k][:m.start()] + repr(x) + lines[k][m.end():]
        else:
            return "\n".join(lines)[: rng.randrange(max(1, len(text)))]
        text = "\n".join(lines)
    return text


def run_check(path: Path) -> tuple[int, str, str]:
    """``benchcheck check`` in this process (one job); exit status, stdout, stderr."""
    from benchcheck.cli import main

    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        try:
            code = main(["check", "--jobs", "1", str(path)])
        except SystemExit as exc:
            code = exc.code if isinstance(exc.code, int) else 2
    return code, out.getvalue(), err.getvalue()


def problems(path: Path, data: bytes, code: int, out: str, err: str) -> list[str]:
    found = []
    if code not in (0, 1, 2):
        found.append(f"exit status {code}")
    if "Traceback" in out + err or "internal error" in out + err:
        found.append("traceback or internal error")
    if path.read_bytes() != data:
        found.append("the layout file was changed")
    return found


def fuzz(count: int, seed: int, folder: Path) -> list[tuple[str, list[str]]]:
    rng = random.Random(seed)
    demos = sorted((ROOT / "layouts").glob("*.toml")) + sorted((ROOT / "layouts" / "flawed").glob("*.toml"))
    texts = [d.read_text(encoding="utf-8") for d in demos]
    (folder / "benchcheck.toml").write_text("# fuzz run: defaults\n", encoding="utf-8")
    bad = []
    for n in range(count):
        text = mutate(rng.choice(texts), rng)
        path = folder / f"mutant{n % 10}.toml"
        data = text.encode("utf-8", errors="surrogatepass")
        path.write_bytes(data)
        code, out, err = run_check(path)
        found = problems(path, data, code, out, err)
        if found:
            bad.append((text, found + [err[-400:]]))
    return bad


def main(count: int = 500, seed: int = 9) -> int:
    with tempfile.TemporaryDirectory(prefix="benchcheck-fuzz-") as tmp:
        t0 = time.perf_counter()
        bad = fuzz(count, seed, Path(tmp))
        dt = time.perf_counter() - t0
    print(f"{count} mutants (seed {seed}) in {dt:.1f} s: {len(bad)} with problems")
    for text, found in bad[:5]:
        print("---", "; ".join(found[:-1]), "\n", found[-1], "\n", text[:600])
    return 1 if bad else 0


if __name__ == "__main__":
    args = [int(a) for a in sys.argv[1:3]]
    sys.exit(main(*args))
