"""Benchmark: what reading a layout costs, from a demo layout to a file at the size limit;
not a test.

Prints CPU times (best of several runs; on a shared machine CPU time is steadier than
wall time) of each step of ``loader.load_text``:

  tomllib    ``tomllib.loads``: the TOML parser itself, a floor benchcheck cannot lower;
  nesting    the check that arrays and inline tables nest at most MAX_NESTING deep;
  read       the loader's own validation into ``model.Layout`` (no line numbers);
  scan       ``tomlpos.key_positions``, the second pass that finds the line and column of
             every key.  It runs only when something reads a location (an error, a finding,
             a report), once per file;

for the demo layouts, for generated bench plans of many optics (1,000 to 60,000: 0.1 to
8 MiB) and for hostile files of 1, 2, 4 and 8 MiB (one huge array, inline tables nested 30
deep, one long string, comments only, many keys, arrays of inline tables).  These figures
set the loader's size limit, MAX_LAYOUT_BYTES (README, "Layout format").

Run: python benchmarks/bench_load.py [--quick]     (--quick: up to 2 MiB, fewer runs)
"""

from __future__ import annotations

import gc
import random
import sys
import time
from pathlib import Path
from typing import Callable

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

from benchcheck.loader import MAX_LAYOUT_BYTES, _Reader, _too_deep, load_path, load_text  # noqa: E402
from benchcheck.model import LayoutError  # noqa: E402
from benchcheck.tomlpos import LazyPositions, key_positions  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parent))
from cputime import cpu_ms  # noqa: E402

MiB = 2 ** 20


def cpu(fn: Callable[[], object], runs: int) -> float:
    """Best CPU time of ``runs`` calls, in seconds."""
    return cpu_ms(fn, 1, runs) / 1e3


# -- generated bench plans ---------------------------------------------------------------

def bench_plan(n_optics: int, seed: int = 1) -> str:
    """A plan of ``n_optics`` optics as people write them (mirrors with coatings, mounts and
    LIDT, lenses, plates, apertures, dumps, comments), one source and beam per 50 optics."""
    rng = random.Random(seed)
    out = ["# generated bench plan (benchmark)\nformat = 1\n\n[bench]\nname = \"Generated bench\"\n"
           "size = [100000, 100000]\n"]
    kinds = ("mirror", "lens", "dump", "aperture", "plate")
    for i in range(n_optics):
        kind = kinds[i % len(kinds)]
        lines = ["", "[[optic]]", f'id = "O{i}"', f'kind = "{kind}"',
                 f"at = [{rng.uniform(10, 99000):.3f}, {rng.uniform(10, 99000):.3f}]", "diameter = 25.4"]
        if kind == "mirror":
            lines += [f"roc = {rng.choice([100.0, 200.0, -500.0])}", "reflectivity = { 1064 = 0.999, 532 = 0.02 }",
                      "mount = { size = [30.0, 20.0] }", "lidt = { w_cm = 1.0e5 }", "# high reflector, 45 degrees"]
        elif kind == "lens":
            lines += [f"focal_length = {rng.choice([50.0, 100.0, 150.0])}", "absorption = 0.001"]
        elif kind == "dump":
            lines += ["max_power_w = 10.0", 'note = "beam dump near the edge"']
        elif kind == "plate":
            lines += ["thickness = 3.0", "index = 1.45", "aoi = 10.0"]
        out.append("\n".join(lines) + "\n")
    for b in range(0, n_optics, 50):
        ids = ", ".join(f'"O{i}"' for i in range(b, min(b + 50, n_optics)))
        out.append(f'\n[[source]]\nid = "S{b}"\nat = [5.0, {5 + b}.0]\nheading = 0.0\nwavelength_nm = 1064\n'
                   f'power_w = 0.5\nwaist = 0.2\n\n[[beam]]\nid = "B{b}"\nfrom = "S{b}"\npath = [{ids}]\n')
    return "".join(out)


def _fill(size: int, head: str, unit: Callable[[int], str], tail: str = "") -> str:
    parts, total, i = [head], len(head), 0
    while total < size - len(tail) - 200:
        part = unit(i)
        parts.append(part)
        total += len(part)
        i += 1
    return "".join(parts) + tail


HEAD = 'format = 1\n[bench]\nname = "hostile"\nsize = [1, 1]\n'
HOSTILE: dict[str, Callable[[int], str]] = {
    "one huge array": lambda size: _fill(size, HEAD + '[[zone]]\nid = "z"\nkind = "keepout"\npolygon = [',
                                         lambda i: f"[{i % 997}.5, {i % 991}.25], ", "[0, 0]]\n"),
    "inline tables nested 30 deep": lambda size: _fill(size, "format = 1\n",
                                                       lambda i: f"k{i} = " + "{ a = " * 30 + "1" + " }" * 30 + "\n"),
    "one long string": lambda size: 'format = 1\n[bench]\nname = "' + "x" * (size - 60) + '"\nsize = [1, 1]\n',
    "comments only": lambda size: _fill(size, "", lambda i: '# comment [not] {structure} "quoted" x = 1\n', HEAD),
    "many keys": lambda size: _fill(size, HEAD + "[x]\n", lambda i: f"k{i} = {i}\n"),
    "arrays of inline tables": lambda size: _fill(size, "format = 1\n", lambda i: f"p{i} = [" + ", ".join(
        f'{{ id = "M{j}", distance = {j}.5 }}' for j in range(10)) + "]\n"),
}


# -- figures ---------------------------------------------------------------------------

def steps(text: str, runs: int) -> dict[str, float]:
    """CPU seconds of each step of load_text on ``text``, and of load_text itself up to the
    layout or to the error message with its line and column ("load")."""
    out = {"tomllib": cpu(lambda: tomllib.loads(text), runs),
           "nesting": cpu(lambda: _too_deep(text), runs),
           "scan": cpu(lambda: key_positions(text), runs)}
    doc = tomllib.loads(text)

    def load():
        try:
            load_text(text, "<bench>")
        except LayoutError as exc:
            str(exc)              # the message names line and column: a (partial) scan

    out["load"] = cpu(load, runs)

    def read():   # as load_text reads: garbage collection paused
        gc.disable()
        try:
            _Reader("<bench>", LazyPositions(text), doc).layout(doc)
        except LayoutError:
            pass
        finally:
            gc.enable()

    out["read"] = cpu(read, runs)
    return out


def row(label: str, size: int, t: dict[str, float], unit: float = 1.0, fmt: str = "{:8.3f}") -> str:
    cells = "".join(fmt.format(t[k] * unit) for k in ("tomllib", "nesting", "read", "scan", "load"))
    whole = (t["load"] + t["scan"]) * unit
    return f"{label:30s}{size / 1024:9.0f}{cells}{fmt.format(whole)}"


HEADER = f"{'':30s}{'KiB':>9s}" + "".join(f"{h:>8s}" for h in ("tomllib", "nesting", "read", "scan", "load",
                                                                "+scan"))
LEGEND = ("load: load_text, to the layout or to the error message (with the scan up to the error);\n"
          "+scan: load and a whole scan, as when findings are reported")


def main(quick: bool = False) -> None:
    print(f"python {sys.version.split()[0]}; CPU time, best of several runs; "
          f"MAX_LAYOUT_BYTES = {MAX_LAYOUT_BYTES} ({MAX_LAYOUT_BYTES / MiB:g} MiB)\n")
    header = HEADER
    print(LEGEND + "\n")
    print("demo layouts, milliseconds per file")
    print(header)
    for path in sorted((ROOT / "layouts").glob("*.toml")):
        text = path.read_text(encoding="utf-8")
        print(row(path.name, len(text.encode()), steps(text, 50 if quick else 200), 1e3))
        load_text(text, path.name)   # the demo layouts load

    print("\nbench plans of n optics, seconds")
    print(header)
    counts = (1000, 5000, 7000, 15000) if quick else (1000, 5000, 7000, 15000, 30000, 60000)
    for n in counts:
        text = bench_plan(n)
        if n <= 7000:
            load_text(text, "plan.toml")   # a valid layout, as the loader reads it
        print(row(f"{n} optics", len(text.encode()), steps(text, 1 if n > 7000 else 3)))

    print("\nhostile files, seconds")
    print(header)
    sizes = (1, 2) if quick else (1, 2, 4, 8)
    for name, make in HOSTILE.items():
        for mib in sizes:
            text = make(mib * MiB)
            print(row(f"{name}", len(text.encode()), steps(text, 1)))

    # a file over the limit is refused from its size alone, before it is read
    import tempfile
    with tempfile.TemporaryDirectory() as tmp:
        big = Path(tmp) / "big.toml"
        with open(big, "wb") as fh:
            fh.truncate(MAX_LAYOUT_BYTES + 1)
        t0 = time.process_time()
        try:
            load_path(big)
        except LayoutError as exc:
            print(f"\nover the limit: refused in {(time.process_time() - t0) * 1e3:.2f} ms CPU: {exc}")


if __name__ == "__main__":
    main(quick="--quick" in sys.argv[1:])
