"""Safe YAML loading for supplier files and mapping profiles.

PyYAML's ``safe_load`` already refuses object construction (``!!python/object``),
but still lets a small file ask for unbounded work or silently change what was
written.  The loaders here add:

* a nesting limit (:data:`MAX_DEPTH` levels), checked while composing, so a deeply
  nested file fails at once instead of recursing;
* a bound on alias expansion (:data:`MAX_ALIAS_EXTRA` values beyond those written)
  and a refusal of recursive aliases, so an alias bomb ("billion laughs") fails
  fast instead of expanding when its values are later walked;
* a refusal of a key that appears twice in one mapping (YAML keeps the last one);
* for datasheet files (:func:`load_data`), plain scalars read as the text written:
  ``0123`` stays ``'0123'`` (YAML 1.1 reads octal 83), ``12:30`` stays ``'12:30'``
  (sexagesimal 750), ``no`` stays ``'no'`` (false).  Only ``~``/``null``/empty
  mean a missing value; numbers are read later by the strict number parser.

Every problem is a :class:`yaml.YAMLError` with a mark (line) where one is known.
"""
from __future__ import annotations

__all__ = ["load_data", "load_profile", "MAX_DEPTH", "MAX_ALIAS_EXTRA"]

import yaml
from yaml.composer import ComposerError
from yaml.constructor import ConstructorError
from yaml.nodes import MappingNode, ScalarNode, SequenceNode

#: Deepest nesting of sequences/mappings accepted (a datasheet file needs about 4).
MAX_DEPTH = 64
#: Values that aliases may add beyond those written in the file.
MAX_ALIAS_EXTRA = 100_000

_NULL = "tag:yaml.org,2002:null"
_MERGE = "tag:yaml.org,2002:merge"


class _Limits(yaml.SafeLoader):
    """SafeLoader with a nesting limit, bounded aliases and no duplicate keys."""

    _depth = 0

    def compose_node(self, parent, index):
        self._depth += 1
        try:
            if self._depth > MAX_DEPTH:
                mark = self.peek_event().start_mark
                raise ComposerError(None, None, f"nested deeper than {MAX_DEPTH} levels, "
                                    "expected a list of flat records", mark)
            return super().compose_node(parent, index)
        finally:
            self._depth -= 1

    def get_single_node(self):
        node = super().get_single_node()
        if node is not None:
            _check_expansion(node)
        return node

    def construct_mapping(self, node, deep=False):
        if isinstance(node, MappingNode):
            seen = set()
            for key_node, _value in node.value:
                if key_node.tag == _MERGE or not isinstance(key_node, ScalarNode):
                    continue
                if key_node.value in seen:
                    raise ConstructorError(None, None, f"key {key_node.value!r} appears twice in one "
                                           "mapping, expected once", key_node.start_mark)
                seen.add(key_node.value)
        return super().construct_mapping(node, deep=deep)


def _children(node):
    if isinstance(node, SequenceNode):
        return node.value
    if isinstance(node, MappingNode):
        return [n for pair in node.value for n in pair]
    return ()


def _check_expansion(root) -> None:
    """Refuse recursive aliases and aliases that multiply the document's size."""
    size: dict[int, int] = {}
    open_: set[int] = set()
    stack = [(root, False)]
    while stack:
        node, closing = stack.pop()
        key = id(node)
        if closing:
            open_.discard(key)
            size[key] = 1 + sum(size[id(c)] for c in _children(node))
            continue
        if key in size:
            continue
        if key in open_:
            raise ComposerError(None, None, "recursive alias (a value that contains itself), "
                                "expected plain values", node.start_mark)
        if isinstance(node, ScalarNode):
            size[key] = 1
            continue
        open_.add(key)
        stack.append((node, True))
        for child in _children(node):
            if id(child) in open_:
                raise ComposerError(None, None, "recursive alias (a value that contains itself), "
                                    "expected plain values", child.start_mark)
            if id(child) not in size:
                stack.append((child, False))
    extra = size[id(root)] - len(size)
    if extra > MAX_ALIAS_EXTRA:
        raise ComposerError(None, None, f"aliases expand the file by {extra} values, expected at most "
                            f"{MAX_ALIAS_EXTRA} (write the values out instead of repeating aliases)",
                            root.start_mark)


class _DataLoader(_Limits):
    """Plain scalars are text (null stays None); see the module docstring."""


_DataLoader.yaml_implicit_resolvers = {
    first: [(tag, rx) for tag, rx in resolvers if tag in (_NULL, _MERGE)]
    for first, resolvers in yaml.SafeLoader.yaml_implicit_resolvers.items()
}


def load_data(text: str):
    """A datasheet YAML document, plain scalars as text."""
    return yaml.load(text, Loader=_DataLoader)  # noqa: S506 - a SafeLoader subclass


def load_profile(text: str):
    """A mapping-profile YAML document (typed scalars, as the profile schema expects)."""
    return yaml.load(text, Loader=_Limits)  # noqa: S506 - a SafeLoader subclass
