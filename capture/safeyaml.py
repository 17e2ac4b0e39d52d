"""Loading YAML from entries, strictly.

Front matter and YAML entries are loaded with a safe loader that turns every plain scalar
into a string (values are typed by our schema, not by YAML 1.1's guesses such as ``NO`` →
False or ``1:20`` → 80); aliases are refused (a 300-byte alias bomb otherwise expands
without limit) and so are duplicate keys. Errors name the line and, for the mistakes
notebooks show most, what to change.
"""

from __future__ import annotations

from typing import Any

import yaml

from capture.safeio import InputError


class _NoDuplicates:
    """Refuses a mapping that repeats a key, naming both lines."""

    def construct_mapping(self, node: Any, deep: bool = False) -> Any:
        seen: dict[Any, int] = {}
        for key_node, _ in node.value:
            key = self.construct_object(key_node, deep=True)
            if isinstance(key, (list, dict)):
                raise InputError(
                    "a YAML key must be plain text", location=f"line {key_node.start_mark.line + 1}"
                )
            if key in seen:
                raise InputError(
                    f"key {key!r} appears twice (lines {seen[key]} and "
                    f"{key_node.start_mark.line + 1})",
                    location=f"line {key_node.start_mark.line + 1}",
                )
            seen[key] = key_node.start_mark.line + 1
        return super().construct_mapping(node, deep=deep)


class _StringLoader(_NoDuplicates, yaml.SafeLoader):
    """Safe YAML loader: plain scalars stay strings, aliases and duplicate keys are refused."""

    def compose_node(self, parent: Any, index: Any) -> Any:
        if self.check_event(yaml.AliasEvent):
            event = self.peek_event()
            raise InputError(
                "YAML aliases (*name) are not allowed in entries",
                location=f"line {event.start_mark.line + 1}",
            )
        return super().compose_node(parent, index)


# LibYAML's parser, when PyYAML was built with it (the wheels are), is about ten times
# faster. Its composer runs in C, out of reach of compose_node above, so it only reads
# documents without a "*", which every alias needs; the rest go to _StringLoader.
_FastLoader = None
if getattr(yaml, "__with_libyaml__", False):

    class _FastLoader(_NoDuplicates, yaml.CSafeLoader):  # type: ignore[no-redef]
        """_StringLoader's rules on LibYAML's parser, for documents with no alias."""


# No implicit resolvers at all: every plain scalar is a str. Quoted and plain
# scalars are then treated alike, and our pydantic schema decides the type.
for _loader in (_StringLoader, _FastLoader):
    if _loader is not None:
        _loader.yaml_implicit_resolvers = {}


_STR, _MAP, _SEQ = "tag:yaml.org,2002:str", "tag:yaml.org,2002:map", "tag:yaml.org,2002:seq"


class _Unusual(Exception):
    """A node with a tag or key that only the full constructor knows what to do with."""


def _plain(node: Any) -> Any:
    """What the constructor makes of a node that has only the default tags (every scalar a
    str, as there are no implicit resolvers), without its per-node machinery: the common
    front matter, about four times faster. Anything else raises _Unusual."""
    tag = node.tag
    if tag == _STR and isinstance(node, yaml.ScalarNode):
        return node.value
    if tag == _MAP and isinstance(node, yaml.MappingNode):
        out: dict[str, Any] = {}
        lines: dict[str, int] = {}
        for key_node, value_node in node.value:
            if key_node.tag != _STR or not isinstance(key_node, yaml.ScalarNode):
                raise _Unusual
            key, line = key_node.value, key_node.start_mark.line + 1
            if key in out:  # the message _NoDuplicates gives
                raise InputError(
                    f"key {key!r} appears twice (lines {lines[key]} and {line})",
                    location=f"line {line}",
                )
            lines[key] = line
            out[key] = _plain(value_node)
        return out
    if tag == _SEQ and isinstance(node, yaml.SequenceNode):
        return [_plain(item) for item in node.value]
    raise _Unusual


def _load_fast(text: str) -> Any:
    loader = _FastLoader(text)
    try:
        node = loader.get_single_node()  # LibYAML parses and composes
        if node is None:
            return None
        try:
            return _plain(node)
        except _Unusual:
            return loader.construct_document(node)
    finally:
        loader.dispose()


def load_yaml(text: str, line_offset: int = 0) -> Any:
    """Load one YAML document safely; errors name the line (shifted by ``line_offset``)."""
    try:
        if _FastLoader is not None and "*" not in text:
            return _load_fast(text)
        return yaml.load(text, Loader=_StringLoader)
    except InputError as exc:
        if exc.location and exc.location.startswith("line ") and line_offset:
            exc.location = f"line {int(exc.location[5:]) + line_offset}"
        raise
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        where = f"line {mark.line + 1 + line_offset}" if mark is not None else None
        problem = getattr(exc, "problem", None) or str(exc)
        advice = _yaml_advice(exc, text, line_offset)
        message = f"{advice} (the YAML reader says: {problem})" if advice else problem
        raise InputError(f"invalid YAML: {message}", location=where) from exc


def _yaml_advice(exc: yaml.YAMLError, text: str, line_offset: int) -> str | None:
    """What a chemist should change, for the YAML mistakes notebooks show most."""
    problem = getattr(exc, "problem", None) or ""
    context = getattr(exc, "context", None) or ""
    mark, start = getattr(exc, "problem_mark", None), getattr(exc, "context_mark", None)
    lines = text.splitlines()
    line = lines[mark.line].strip() if mark is not None and mark.line < len(lines) else ""
    opened = f"line {start.line + 1 + line_offset}" if start is not None else "above"
    key, _, value = line.partition(":")
    if "mapping values are not allowed" in problem and value.strip():
        quoted = value.strip().replace('"', '\\"')
        return f'a colon inside a value needs quotes: {key.strip()}: "{quoted}"'
    if "expected ',' or ']'" in problem or "expected ',' or '}'" in problem:
        bracket = "[" if "]" in problem else "{"
        return (f'a "{bracket}" opened on {opened} is not closed: close it, or put a value that '
                f'starts with "{bracket}" in quotes')  # fmt: skip
    if "nesting depth" in problem:
        return "lists and mappings nest too deep here; an entry needs a few levels"
    if "tab character" in problem:
        return "a tab is used for indentation; indent with spaces"
    if "quoted scalar" in context:
        return f"a quote opened on {opened} is not closed"
    if "cannot start any token" in problem and value.strip()[:1] in {"@", "`", "%"}:
        return f'a value cannot start with "{value.strip()[0]}" unless it is in quotes: ' \
               f'{key.strip()}: "{value.strip()}"'  # fmt: skip
    if any(p in problem for p in ("expected '-' indicator", "expected key", "expected ':'")):
        return ("this line does not line up with the lines around it, or lacks 'key: value': "
                "indent it with as many spaces as its neighbours, and put a value that runs "
                "onto the next line in quotes")  # fmt: skip
    return None
