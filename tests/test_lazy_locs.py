"""The loader finds line numbers only when something reads one (tomlpos.LazyPositions)."""

from __future__ import annotations

import copy
import pickle
from pathlib import Path

from benchcheck import tomlpos
from benchcheck.loader import load_text
from benchcheck.model import Loc

DEMO = Path(__file__).resolve().parents[1] / "layouts" / "folded-brewster.toml"


def _counting(monkeypatch) -> list:
    calls = []
    real = tomlpos.key_positions

    def counted(text, until=None):
        calls.append(until)
        return real(text, until)

    monkeypatch.setattr(tomlpos, "key_positions", counted)
    return calls


def _line_col(text: str, needle: str) -> tuple[int, int]:
    offset = text.index(needle)
    return text.count("\n", 0, offset) + 1, offset - (text.rfind("\n", 0, offset) + 1) + 1


def test_a_clean_layout_is_loaded_without_the_position_scan(monkeypatch):
    calls = _counting(monkeypatch)
    text = DEMO.read_text(encoding="utf-8")
    layout = load_text(text, "demo.toml")
    assert calls == []
    clone = pickle.loads(pickle.dumps(layout))           # as a plugin's copy of the bench is made
    assert calls == []
    m2 = layout.optics["M2"]
    where = m2.where("roc")
    assert calls == []                                   # made, not yet read
    assert (where.line, where.column) == _line_col(text, "roc = 100.0")
    assert calls == [("optic", 1, "roc")]                # scanned only up to that key
    assert m2.loc == Loc("demo.toml", *_line_col(text, '[[optic]]\nid = "M2"'))
    assert layout.cavities["osc"].path[1].loc == Loc("demo.toml", *_line_col(text, '{ id = "M2", distance = 500.0'))
    assert calls == [("optic", 1, "roc"), None]         # then once through the whole text for every later Loc
    assert clone.optics["M2"].where("roc") == where and len(calls) == 3


def test_a_scan_stopped_at_a_path_finds_it_where_the_whole_scan_does():
    for path in sorted((DEMO.parent).glob("*.toml")) + sorted((DEMO.parent / "flawed").glob("*.toml")):
        text = path.read_text(encoding="utf-8")
        whole = tomlpos.key_positions(text)
        for key, pos in whole.items():
            part = tomlpos.key_positions(text, until=key)
            assert part[key] == pos, (path.name, key)
            assert set(part) <= set(whole) and len(part) <= len(whole)


def test_an_error_still_names_line_and_column(monkeypatch):
    text = DEMO.read_text(encoding="utf-8").replace("focal_length = 150.0", "focal_length = 0.0")
    try:
        load_text(text, "demo.toml")
    except Exception as exc:  # noqa: BLE001
        line, col = _line_col(text, "focal_length = 0.0")
        assert str(exc).startswith(f"demo.toml:{line}:{col}: error: "), str(exc)
    else:
        raise AssertionError("a zero focal length loaded")


def test_a_pending_loc_behaves_as_the_plain_one():
    calls = []

    def where():
        calls.append(1)
        return 7, 3

    plain = Loc("f.toml", 7, 3)
    before = Loc.pending("f.toml", where)
    copied = pickle.loads(pickle.dumps(Loc.pending("f.toml", _seven_three)))
    assert calls == []
    assert copied == plain and hash(copied) == hash(plain) and str(copied) == "f.toml:7:3"
    assert before == plain and repr(before) == repr(plain) and vars(before) == vars(plain)
    assert copy.deepcopy(Loc.pending("g", where)) == Loc("g", 7, 3)
    try:
        before.line = 1
    except AttributeError:
        pass
    else:
        raise AssertionError("a Loc is frozen")


def test_the_layout_key_locs_are_the_scanned_positions():
    text = DEMO.read_text(encoding="utf-8")
    layout = load_text(text, "demo.toml")
    expected = {path: Loc("demo.toml", *pos) for path, pos in tomlpos.key_positions(text).items()}
    assert dict(layout.key_locs) == expected
    assert layout.key_locs[("optic", 1, "roc")] == Loc("demo.toml", *_line_col(text, "roc = 100.0"))
    assert dict(layout.optics["M2"].key_locs) == {k: Loc("demo.toml", *tomlpos.key_positions(text)[("optic", 1, k)])
                                                  for k in ("id", "kind", "roc", "reflectivity", "diameter",
                                                            "substrate", "lidt")}


def _seven_three():
    return 7, 3


def test_a_path_written_before_the_first_asked_is_found_without_a_second_scan(monkeypatch):
    calls = _counting(monkeypatch)
    text = DEMO.read_text(encoding="utf-8")
    layout = load_text(text, "demo.toml")
    cavity = next(iter(layout.cavities.values()))
    first = cavity.where("wavelength_nm")
    assert (first.line, first.column) == _line_col(text, "wavelength_nm = 800")
    assert calls == [("cavity", 0, "wavelength_nm")]
    roc = layout.optics["M2"].where("roc")               # an optic's keys come before the cavity's
    assert (roc.line, roc.column) == _line_col(text, "roc = 100.0")
    assert calls == [("cavity", 0, "wavelength_nm")]     # answered from the scan that stopped at the cavity


def test_the_header_of_a_table_of_an_array_is_found_without_a_scan(monkeypatch):
    calls = _counting(monkeypatch)
    text = DEMO.read_text(encoding="utf-8")
    layout = load_text(text, "demo.toml")
    cavity = next(iter(layout.cavities.values()))
    assert (cavity.loc.line, cavity.loc.column) == _line_col(text, "[[cavity]]")
    m2 = layout.optics["M2"].loc
    assert (m2.line, m2.column) == _line_col(text, '[[optic]]\nid = "M2"')
    assert calls == []


def test_headers_read_by_pattern_are_where_the_whole_scan_has_them():
    for path in sorted((DEMO.parent).glob("*.toml")) + sorted((DEMO.parent / "flawed").glob("*.toml")):
        text = path.read_text(encoding="utf-8")
        whole = tomlpos.key_positions(text)
        heads = tomlpos.aot_headers(text)
        listed = {(name, n): at for name, ats in heads.items() for n, at in enumerate(ats)}
        assert listed == {p: at for p, at in whole.items() if len(p) == 2 and isinstance(p[1], int)}, path.name


def test_headers_are_not_read_by_pattern_where_a_string_or_quoted_key_could_fool_it():
    text = 'note = """\n[[optic]]\n"""\n[[optic]]\nid = "A"\n'
    assert tomlpos.aot_headers(text) is None
    assert tomlpos.LazyPositions(text).nearest(("optic", 0)) == (4, 1)    # the scanner's answer
    assert tomlpos.aot_headers("[[\"optic\"]]\nid = 'A'\n[[optic]]\nid = 'B'\n") is None
    # a value of a multi-line array and a dotted header are no header of "x" or "a"
    text = "x = [\n[[1]]\n]\n[[a]] # first\n  [[ a ]]\r\n[[a.b]]\n"
    assert tomlpos.aot_headers(text) == {"a": [(4, 1), (5, 3)]}
    assert [tomlpos.key_positions(text)[("a", n)] for n in (0, 1)] == [(4, 1), (5, 3)]


def test_a_table_only_implied_before_the_first_asked_is_found_where_its_header_is():
    # [a] is only implied by [a.b] when the scan for c.z stops; its own header comes after
    text = "[a.b]\nx = 1\n[c]\nz = 2\n[a]\ny = 3\n"
    positions = tomlpos.LazyPositions(text)
    assert positions.nearest(("c", "z")) == (4, 1)
    assert positions.nearest(("a",)) == (5, 1)           # the explicit header, as the whole scan has it
    assert tomlpos.key_positions(text)[("a",)] == (5, 1)
    assert positions.nearest(("a", "b", "x")) == (2, 1)
