"""BibTeX for the papers behind a theory: the reference dicts of
:attr:`eftsieve.theories.base.Theory.references` rendered as entries.

Use :func:`references_for` to collect the references of one theory or of all of them
(the same paper cited by two theories appears once) and :func:`to_bibtex` to render
them.  A reference with a journal becomes an ``@article``; one known only by its arXiv
id becomes an ``@misc`` with ``eprint`` and ``archivePrefix`` (the fields that BibTeX
styles for physics read).
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from typing import Any

from eftsieve.errors import InputError

#: fields every reference must carry
REQUIRED = ("key", "authors", "title", "year")
#: the optional fields, in the order they are written
OPTIONAL = ("journal", "volume", "pages", "eprint")


def check_reference(ref: Mapping[str, Any], where: str = "references") -> None:
    """Raise InputError unless ``ref`` has the required fields and a journal or eprint."""
    for name in REQUIRED:
        if not ref.get(name):
            raise InputError(None, f"{where}.{name}", "missing", "add it to the theory's "
                             "references")
    if not ref.get("journal") and not ref.get("eprint"):
        raise InputError(None, f"{where}.journal", "a reference needs a journal or an arXiv "
                         "eprint id", "add one of them")
    unknown = set(ref) - set(REQUIRED) - set(OPTIONAL)
    if unknown:
        raise InputError(None, f"{where}.{sorted(unknown)[0]}", "unknown field",
                         f"use only {', '.join(REQUIRED + OPTIONAL)}")
    if isinstance(ref["authors"], str):
        raise InputError(None, f"{where}.authors", "must be a tuple of names, not one string",
                         "write ('A. Author', 'B. Author')")


def references_for(theories: Sequence[Any]) -> tuple[dict[str, Any], ...]:
    """The references of ``theories`` (Theory objects) in order, each key once.

    Two theories that cite the same key must give the same reference; InputError if not.
    """
    seen: dict[str, dict[str, Any]] = {}
    for th in theories:
        for i, ref in enumerate(th.references):
            check_reference(ref, f"{th.name}.references[{i}]")
            old = seen.get(ref["key"])
            if old is not None and old != dict(ref):
                raise InputError(None, f"{th.name}.references[{i}].key",
                                 f"key '{ref['key']}' names two different papers",
                                 "give each paper one key and one set of fields")
            seen.setdefault(ref["key"], dict(ref))
    return tuple(seen.values())


def bibtex_entry(ref: Mapping[str, Any]) -> str:
    """One BibTeX entry; the title is braced so that styles keep its capitals."""
    check_reference(ref)
    kind = "article" if ref.get("journal") else "misc"
    fields = [("author", " and ".join(ref["authors"])), ("title", "{" + ref["title"] + "}")]
    fields += [(name, str(ref[name])) for name in ("journal", "volume", "pages")
               if ref.get(name)]
    if ref.get("eprint"):
        fields += [("eprint", ref["eprint"]), ("archivePrefix", "arXiv")]
    fields.append(("year", str(ref["year"])))
    body = ",\n".join(f"  {name} = {{{value}}}" for name, value in fields)
    return f"@{kind}{{{ref['key']},\n{body}\n}}\n"


def to_bibtex(refs: Iterable[Mapping[str, Any]]) -> str:
    """Entries separated by blank lines."""
    return "\n".join(bibtex_entry(r) for r in refs)
