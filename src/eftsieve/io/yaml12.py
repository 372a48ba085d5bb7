"""A YAML loader for fit cards that reads numbers as YAML 1.2 does.

PyYAML follows YAML 1.1, whose float pattern needs a dot and a signed exponent: ``9e-8``
and ``1e5`` are read as strings there, while every other tool (YAML 1.2, JSON, Python)
reads them as numbers.  :class:`CardLoader` is PyYAML's safe loader with the YAML 1.2
core-schema float pattern added (YAML 1.2.2 spec, Sec. 10.3.2), so ``9e-8`` is a float.
"""

from __future__ import annotations

import re
from collections.abc import Callable
from typing import Any, NoReturn

import yaml

#: the YAML 1.2 core-schema float (spec 1.2.2, Sec. 10.3.2), decimal forms only
FLOAT_12 = re.compile(r"^[-+]?(\.[0-9]+|[0-9]+(\.[0-9]*)?)([eE][-+]?[0-9]+)?$")


class CardLoader(yaml.SafeLoader):
    """PyYAML's safe loader, reading YAML 1.2 exponent floats (``9e-8``) as numbers."""


CardLoader.add_implicit_resolver(
    "tag:yaml.org,2002:float",
    re.compile(r"^[-+]?(\.[0-9]+|[0-9]+(\.[0-9]*)?)[eE][-+]?[0-9]+$"),
    list("-+0123456789."))


def load_yaml(text: str) -> Any:
    """Parse YAML text with :class:`CardLoader`."""
    return yaml.load(text, Loader=CardLoader)  # noqa: S506 - a SafeLoader subclass


def strict_loader(refuse: Callable[[Any, Any, str], NoReturn],
                  plain: Callable[[Any], bool] | None = None) -> type:
    """A :class:`CardLoader` whose mappings refuse a key given twice (a second ``values:``
    would silently replace the first) and a key that is not plain.

    ``refuse(key_node, key, reason)`` must raise; ``reason`` is ``"duplicate"`` or
    ``"not text"`` (an unhashable key, or one that ``plain`` rejects).
    """

    class StrictLoader(CardLoader):
        """The YAML 1.2-number safe loader, refusing duplicate and non-plain keys."""

    def mapping(loader: Any, node: Any, deep: bool = False) -> dict[Any, Any]:
        loader.flatten_mapping(node)
        out: dict[Any, Any] = {}
        for knode, vnode in node.value:
            key = loader.construct_object(knode, deep=deep)
            if plain is not None and not plain(key):
                refuse(knode, key, "not text")
            try:
                dup = key in out
            except TypeError:
                refuse(knode, key, "not text")
            if dup:
                refuse(knode, key, "duplicate")
            out[key] = loader.construct_object(vnode, deep=deep)
        return out

    StrictLoader.add_constructor(yaml.resolver.BaseResolver.DEFAULT_MAPPING_TAG, mapping)
    return StrictLoader
