"""Terminal safety, grazing folds and tiny waists (issue 9, items 5, 7 and the waist of 10).

Each case is the bad-input base layout with one change; a rejected layout ends with exit
status 2 and one located ``FILE:LINE:COL: error:`` line, never a traceback.
"""

from __future__ import annotations

import pytest

from benchcheck.engine import FileResult
from benchcheck.findings import Finding
from benchcheck.model import Loc
from benchcheck.reporters import github_report, text_report
from benchcheck.textsafe import one_line
from test_bad_input import BASE, ERROR_LINE, one_change, run_inprocess


def _run(tmp_path, text: str, *args: str):
    path = tmp_path / "layout.toml"
    path.write_text(text, encoding="utf-8")
    return path, run_inprocess([*args, str(path)] if args else ["beams", str(path)])


def _line_of(text: str, fragment: str) -> int:
    return next(i for i, line in enumerate(text.splitlines(), 1) if fragment in line)


def _one_located_error(err: str, line: int) -> str:
    lines = err.splitlines()
    assert len(lines) == 1, err
    m = ERROR_LINE.match(lines[0])
    assert m, err
    assert int(m["line"]) == line, err
    return m["msg"]


# -- item 5: ids match their whole pattern; control characters never reach the terminal ----

@pytest.mark.parametrize("bad", ["HR\\n", "HR\\u001b[2J", "HR\\t", "HR "])
def test_an_id_with_a_trailing_control_character_is_a_located_error(tmp_path, bad):
    text = one_change('id = "HR"', f'id = "{bad}"')
    _, (code, out, err) = _run(tmp_path, text)
    assert code == 2
    msg = _one_located_error(err, _line_of(text, f'id = "{bad}"'))
    assert "must be an id" in msg
    assert "\x1b" not in err


def test_a_bench_name_with_escape_sequences_prints_on_one_line(tmp_path):
    text = one_change('name = "Bad-input base bench"', 'name = "bench\\n\\u001b[31mfake: error\\u0007"')
    path, (code, out, err) = _run(tmp_path, text)
    assert code == 0, err
    first = out.splitlines()[0]
    assert first == f"{path}: bench\\n\\e[31mfake: error\\x07"
    assert not any(ch in out for ch in "\x1b\x07")


def test_text_and_annotation_reports_keep_one_finding_per_line():
    f = Finding("beam \"X\nfake.toml:1:1: error: injected\x1b[2K\" clips", targets=("X",), rule="r",
                severity="error", loc=Loc("a\rb.toml", 3, 4), waived=True, waiver_reason="ok\u2028then")
    report = text_report([FileResult("a.toml", findings=[f])], {})
    lines = report.splitlines()
    # finding, its waiver line, the summary; then the safety caution lines every report ends with
    assert len(lines) >= 3 and lines[2].startswith("0 errors"), report
    assert all("laser safety officer" in line or "not a safety approval" in line for line in lines[3:]), report
    assert lines[0].startswith("a\\rb.toml:3:4: error (waived): beam \"X\\nfake.toml")
    assert lines[1] == "    waived: ok\\u2028then"
    gh = github_report([FileResult("a.toml", findings=[f.with_(waived=False)])], {})
    findings = [line for line in gh.splitlines() if not line.startswith("::notice title=benchcheck::")]
    assert len(findings) == 1 and "\x1b" not in gh and "%0A" in findings[0]


def test_one_line_escapes_controls_and_keeps_other_text():
    assert one_line("µm, 45°, ±0.5 — ok") == "µm, 45°, ±0.5 — ok"
    assert one_line("a\nb\tc\x1bd\x7f\x9b\u202e") == "a\\nb\\tc\\ed\\x7f\\x9b\\u202e"


# -- item 7: a fold at or near +-180 is an error, the same for 179.9 and 179.99 -------------

@pytest.mark.parametrize("fold", ["180.0", "-180.0", "179.99", "179.9", "-179.9", "178.5"])
def test_a_grazing_fold_is_rejected_at_its_line(tmp_path, fold):
    text = BASE
    text = text.replace('reflectivity = { 1064 = 0.95 }', f'reflectivity = {{ 1064 = 0.95 }}\nfold = {fold}')
    _, (code, out, err) = _run(tmp_path, text)
    assert code == 2
    msg = _one_located_error(err, _line_of(text, f"fold = {fold}"))
    assert "178" in msg and "grazing" in msg


def test_a_fold_of_178_is_accepted_by_the_loader(tmp_path):
    from benchcheck.loader import load_text
    text = BASE.replace('reflectivity = { 1064 = 0.95 }', 'reflectivity = { 1064 = 0.95 }\nfold = 178.0')
    assert load_text(text).optics["OC"].fold == 178.0


def test_a_grazing_fold_in_a_path_entry_is_rejected(tmp_path):
    text = BASE
    text = text.replace('"HR", { id = "X1", distance = 50.0 }', '"HR", { id = "X1", distance = 50.0, fold = 179.99 }')
    _, (code, out, err) = _run(tmp_path, text)
    assert code == 2
    _one_located_error(err, _line_of(text, "fold = 179.99"))


# -- item 10: the waist is at least one wavelength ------------------------------------------

def test_a_waist_far_below_the_wavelength_is_rejected(tmp_path):
    # 633 nm = 6.33e-4 mm; 1e-4 mm (0.1 um) is far below it
    text = one_change("waist = 0.4", "waist = 1e-4")
    _, (code, out, err) = _run(tmp_path, text)
    assert code == 2
    msg = _one_located_error(err, _line_of(text, "waist = 1e-4"))
    assert "wavelength" in msg and "0.000633" in msg


def test_a_waist_of_a_few_wavelengths_is_accepted(tmp_path):
    text = one_change("waist = 0.4", "waist = 0.002")      # 2 um, about 3 wavelengths at 633 nm
    _, (code, out, err) = _run(tmp_path, text)
    assert code == 0, err


def test_waist_t_below_the_wavelength_is_rejected_at_its_key(tmp_path):
    text = one_change("waist = 0.4", "waist_t = 0.4\nwaist_s = 0.0005")
    _, (code, out, err) = _run(tmp_path, text)
    assert code == 2
    _one_located_error(err, _line_of(text, "waist_s = 0.0005"))


# -- item 6 (found by the fuzz run): an integer beyond Python's int-string limit ------------

def test_an_integer_of_thousands_of_digits_is_a_located_error(tmp_path):
    text = one_change("roc = 300.0", "roc = " + "3" * 5000)
    _, (code, out, err) = _run(tmp_path, text)
    assert code == 2
    msg = _one_located_error(err, _line_of(text, "roc = 333"))
    assert "digits" in msg


# -- item 6: input limits --------------------------------------------------------------------

def test_a_named_fifo_is_refused_without_reading_it(tmp_path):
    import os
    fifo = tmp_path / "pipe.toml"
    os.mkfifo(fifo)
    code, out, err = run_inprocess(["beams", str(fifo)])     # would block forever if opened
    assert code == 2
    assert err.strip() == f"{fifo}: error: is not a regular file (a device, pipe or socket); a layout is a TOML text file"


def test_dev_zero_is_refused():
    code, out, err = run_inprocess(["beams", "/dev/zero"])
    assert code == 2 and "not a regular file" in err


def test_a_file_over_the_size_limit_is_refused_before_reading(tmp_path):
    from benchcheck.loader import MAX_LAYOUT_BYTES
    big = tmp_path / "big.toml"
    with open(big, "wb") as fh:
        fh.truncate(MAX_LAYOUT_BYTES + 1)       # sparse: nothing would be read quickly
    code, out, err = run_inprocess(["beams", str(big)])
    assert code == 2 and "MiB are not read" in err and len(err.splitlines()) == 1


def test_a_polygon_with_too_many_points_is_a_located_error(tmp_path):
    from benchcheck.loader import MAX_POLYGON_POINTS
    pts = ", ".join(f"[{i % 800}, {(i * 7) % 280}]" for i in range(MAX_POLYGON_POINTS + 1))
    text = one_change("polygon = [[0, 280], [800, 280], [800, 300], [0, 300]]", f"polygon = [{pts}]")
    _, (code, out, err) = _run(tmp_path, text)
    assert code == 2
    msg = _one_located_error(err, _line_of(text, "polygon = [[0, 0]"))
    assert f"at most {MAX_POLYGON_POINTS}" in msg


@pytest.mark.parametrize("quoted", ['"[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[\\"[["', "'[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[['",
                                    '"""\n[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[\n"""', "'''[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[['''",
                                    "0 # [[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[["])
def test_the_nesting_check_skips_strings_and_comments(quoted):
    from benchcheck.loader import MAX_NESTING, _too_deep
    text = f"a = {quoted}\nb = " + "[" * MAX_NESTING + "]" * MAX_NESTING + "\n"
    assert _too_deep(text) is None
    deeper = text + "c = [" + "[" * MAX_NESTING + "1" + "]" * (MAX_NESTING + 1) + "\n"
    line = deeper.count("\n")
    assert _too_deep(deeper) == (line, 5 + MAX_NESTING)     # the first bracket past the limit


def test_a_file_name_with_control_characters_is_echoed_on_one_line(tmp_path):
    bad = tmp_path / "evil\n\x1b[2Jname.toml"
    bad.write_text(one_change('id = "HR"', 'id = "H R"'), encoding="utf-8")
    for args in (["beams", str(bad)], ["check", "--jobs", "1", str(bad)]):
        code, out, err = run_inprocess(args)
        assert code == 2
        assert "\x1b" not in out + err
        lines = err.splitlines()
        assert len(lines) == 1 and "evil\\n\\e[2Jname.toml:" in lines[0], err
