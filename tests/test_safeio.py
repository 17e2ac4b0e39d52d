"""Bounded, strict reading and atomic writing (traps listed in shared RELIABILITY.md)."""

from __future__ import annotations

import os

import pytest

from capture import safeio, safeyaml
from capture.safeio import InputError, atomic_write, decode_text, load_json, read_bounded
from capture.safeyaml import load_yaml

# YAML 1.1 implicit typing would turn these into booleans, sexagesimal integers, octal, floats.
YAML_SCALARS = [
    ("NO", "NO"),
    ("on", "on"),
    ("yes", "yes"),
    ("1:20", "1:20"),
    ("0755", "0755"),
    ("1e3", "1e3"),
    ("3.50", "3.50"),
    ("2026-11-03", "2026-11-03"),
    ("~", "~"),
    ("null", "null"),
    ("'quoted'", "quoted"),
]


@pytest.mark.parametrize(("raw", "expected"), YAML_SCALARS, ids=[s[0] for s in YAML_SCALARS])
def test_yaml_scalars_stay_text(raw, expected):
    assert load_yaml(f"key: {raw}") == {"key": expected}


def test_yaml_alias_bomb_is_refused():
    bomb = 'a: &a ["x","x"]\nb: &b [*a,*a]\nc: &c [*b,*b]\nd: [*c,*c]\n'
    with pytest.raises(InputError, match="aliases") as err:
        load_yaml(bomb, line_offset=1)
    assert err.value.location == "line 3"


def test_yaml_duplicate_key_names_both_lines():
    with pytest.raises(InputError, match=r"'title' appears twice \(lines 1 and 3\)"):
        load_yaml("title: a\nauthor: b\ntitle: c\n")


def test_yaml_syntax_error_names_the_line():
    with pytest.raises(InputError, match="invalid YAML") as err:
        load_yaml("a: 1\nb: [unclosed\nc: 2\n", line_offset=1)
    assert err.value.location.startswith("line ")


def test_yaml_tags_are_refused():
    with pytest.raises(InputError):
        load_yaml("a: !!python/object/apply:os.system ['echo hi']")


def test_json_nan_and_duplicates_refused():
    with pytest.raises(InputError, match="NaN"):
        load_json('{"a": NaN}')
    with pytest.raises(InputError, match="twice"):
        load_json('{"a": 1, "a": 2}')
    with pytest.raises(InputError, match="invalid JSON") as err:
        load_json('{\n"a": 1,\n}')
    assert err.value.location == "line 3"


def test_binary_and_non_utf8_refused():
    with pytest.raises(InputError, match="binary"):
        decode_text(b"\x89PNG\r\n\x1a\n\x00\x00")
    with pytest.raises(InputError, match="not UTF-8") as err:
        decode_text(b"---\ntitle: caf\xe9\n---\n")
    assert err.value.location == "line 2"


def test_bom_and_crlf_are_absorbed():
    assert decode_text("\ufeff---\r\na: 1\r\n".encode()) == "---\na: 1\n"


def test_size_cap(tmp_path):
    big = tmp_path / "big.md"
    big.write_bytes(b"x" * 2048)
    with pytest.raises(InputError, match="larger than"):
        read_bounded(big, limit=1024)
    assert read_bounded(big, limit=4096) == b"x" * 2048


def test_fifo_is_not_opened(tmp_path):
    fifo = tmp_path / "pipe.md"
    os.mkfifo(fifo)
    with pytest.raises(InputError, match="not a regular file"):
        read_bounded(fifo, 1024)


def test_a_file_holds_data_only_when_its_bytes_are_the_same(tmp_path):
    """What a scan asks before it rewrites a result: the same bytes, yes; the same size with
    other bytes, a longer or shorter file, no file, a FIFO or a link in its place, no (and
    the FIFO is never opened, so the question never blocks)."""
    target = tmp_path / "a.waste.json"
    assert safeio.holds(target, b"one\n") is False  # not there
    target.write_bytes(b"one\n")
    assert safeio.holds(target, b"one\n") is True
    assert safeio.holds(target, b"two\n") is False  # same size, other bytes
    assert safeio.holds(target, b"one\n\n") is False and safeio.holds(target, b"one") is False
    link = tmp_path / "b.waste.json"
    link.symlink_to(target)
    assert safeio.holds(link, b"one\n") is False
    os.mkfifo(tmp_path / "c.waste.json")
    assert safeio.holds(tmp_path / "c.waste.json", b"") is False


def test_atomic_write_skips_identical_content(tmp_path):
    target = tmp_path / "a.waste.json"
    assert atomic_write(target, "one\n") is True
    before = target.stat().st_mtime_ns
    assert atomic_write(target, "one\n") is False
    assert target.stat().st_mtime_ns == before
    assert atomic_write(target, "two\n") is True
    assert target.read_text() == "two\n"


def test_atomic_write_failure_leaves_old_file_and_no_temp(tmp_path, monkeypatch):
    """Fault injection: os.replace fails; the old content stays and no temp file is left."""
    target = tmp_path / "a.waste.json"
    target.write_text("old\n")

    def broken_replace(src, dst):
        raise OSError("injected failure")

    monkeypatch.setattr(safeio.os, "replace", broken_replace)
    with pytest.raises(OSError, match="injected"):
        atomic_write(target, "new\n")
    assert target.read_text() == "old\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.waste.json"]


def _front_matters():
    from conftest import EXAMPLES

    out = []
    for p in sorted(EXAMPLES.rglob("*")):
        if p.suffix == ".md" and ".waste." not in p.name:
            text = p.read_text(encoding="utf-8")
            if text.startswith("---"):
                out.append(text.split("---", 2)[1])
        elif p.suffix == ".yaml":
            out.append(p.read_text(encoding="utf-8"))
    return out


UNUSUAL_YAML = [
    "a: !!int 3\nb: [x, y]\n",  # an explicit tag: the constructor's own answer
    "a:\n  - {b: c, d: [e, f]}\n  -\n  - ''\n",
    "? [a, b]\n: c\n",  # a key that is not text
    "title: a\nauthor: b\ntitle: c\n",
    "a: {x: 1, x: 2}\n",
    "",
    "- a\n- b: !!str 5\n",
    "a: |\n  two\n  lines\nb: >\n  folded\n  text\n",
]


@pytest.mark.parametrize("text", _front_matters() + UNUSUAL_YAML)
def test_the_fast_yaml_path_gives_what_the_pure_python_loader_gives(text):
    """LibYAML's parser with our node walker, against PyYAML's pure-Python loader with the
    same rules (the reference): the same value, or the same error and line."""
    import yaml

    if safeyaml._FastLoader is None:
        pytest.skip("PyYAML without LibYAML")

    def outcome(load):
        try:
            return "value", load(text)
        except InputError as exc:
            return "error", exc.message, exc.location

    assert outcome(safeyaml._load_fast) == outcome(
        lambda t: yaml.load(t, Loader=safeyaml._StringLoader)
    )


@pytest.mark.parametrize(
    ("text", "line", "advice"),
    [("title: Step 2: reduction\n", 4, 'a colon inside a value needs quotes: title: "Step 2: reduction"'),
     ("title: [unclosed\nauthor: A\n", 5, 'a "[" opened on line 4 is not closed'),
     ("product: {name: p, mass: 1 g\nauthor: A\n", 5, 'a "{" opened on line 4 is not closed'),
     ("title: x\n\tauthor: A\n", 5, "a tab is used for indentation; indent with spaces"),
     ('title: "unclosed\nauthor: A\n', 6, "a quote opened on line 4 is not closed"),
     ("author: @kim\n", 4, 'a value cannot start with "@" unless it is in quotes: author: "@kim"'),
     ("materials:\n  - name: A\n   amount: 2 g\n", 6, "this line does not line up")],
)  # fmt: skip
def test_a_broken_yaml_line_is_explained_in_the_chemist_s_words(text, line, advice):
    """The front matter's mistakes as chemists make them, each with what to change and the
    line (the front matter starts on line 2 of the entry: offset 3 here)."""
    with pytest.raises(InputError) as err:
        load_yaml(text, line_offset=3)
    assert err.value.location == f"line {line}"
    assert err.value.message.startswith(f"invalid YAML: {advice}")
    assert "(the YAML reader says:" in err.value.message


def test_deep_nesting_is_an_input_error_with_a_line_not_an_internal_error():
    """1,000 levels of lists: JSON is refused before the parser recurses, YAML by LibYAML's
    depth limit, both with a line and a message in plain words."""
    deep = "[" * 1000 + "]" * 1000
    with pytest.raises(InputError) as err:
        load_json('{"title": "t",\n"x": ' + deep + "}")
    assert err.value.location == "line 2" and "nest more than 64 levels" in err.value.message
    with pytest.raises(InputError) as err:
        load_yaml("title: t\nx: " + deep + "\n")
    assert err.value.location == "line 2" and "nest too deep" in err.value.message
    assert load_json('{"s": "[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[["}')


def test_many_files_replaced_together_are_whole_and_leave_no_temp_files(tmp_path, monkeypatch):
    """replace_all_atomically: every target holds its new bytes, no temp file is left, and a
    failure before the moves leaves every target as it was and removes the temp files."""
    from capture import safeio

    targets = [tmp_path / f"e{i}.waste.json" for i in range(5)]
    targets[0].write_bytes(b"old")
    safeio.replace_all_atomically([(p, f"new {p.name}".encode()) for p in targets])
    assert [p.read_bytes() for p in targets] == [f"new {p.name}".encode() for p in targets]
    assert not list(tmp_path.glob(".*.tmp"))

    def no_sync(fd):
        raise OSError(5, "Input/output error")

    monkeypatch.setattr(safeio.os, "fsync", no_sync)
    monkeypatch.setattr(safeio, "_syncfs", lambda: None)  # the per-file path, which fails
    with pytest.raises(OSError, match="Input/output"):
        safeio.replace_all_atomically([(p, b"newer") for p in targets])
    assert [p.read_bytes() for p in targets] == [f"new {p.name}".encode() for p in targets]
    assert not list(tmp_path.glob(".*.tmp"))
