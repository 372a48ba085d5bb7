"""BibTeX of the theories' references, read back by an independent parser (pybtex)."""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from pybtex.database import parse_string

from eftsieve.errors import InputError
from eftsieve.report.bibtex import bibtex_entry, check_reference, references_for, to_bibtex
from eftsieve.theories import available_theories, get_theory

ROOT = Path(__file__).parents[2]
THEORIES = [get_theory(n) for n in available_theories()]
#: arXiv identifier schemes: YYMM.NNNN(N) since 2007, archive/YYMMNNN before (arXiv's own
#: documentation of identifiers; common practice)
NEW_ID, OLD_ID = re.compile(r"^(\d{2})(\d{2})\.\d{4,5}$"), re.compile(r"^[a-z-]+/(\d{2})\d{5}$")


def _id_year(eprint: str) -> int:
    m = NEW_ID.match(eprint) or OLD_ID.match(eprint)
    assert m is not None, f"not an arXiv id: {eprint}"
    yy = int(m.group(1))
    return 2000 + yy if yy < 91 else 1900 + yy


@pytest.mark.parametrize("theory", THEORIES, ids=lambda t: t.name)
def test_every_theory_cites_papers_and_each_is_well_formed(theory):
    assert len(theory.references) >= 2
    for i, ref in enumerate(theory.references):
        check_reference(ref, f"{theory.name}.references[{i}]")
        if "eprint" in ref:   # the year of an arXiv-only entry is that of its identifier
            assert ref["year"] == _id_year(ref["eprint"]), ref["key"]


@pytest.mark.parametrize("theory", THEORIES, ids=lambda t: t.name)
def test_references_are_the_papers_the_code_and_docs_cite(theory):
    """Each arXiv id is cited in the theory's own source or in docs/ (so the list is the
    papers actually behind the code, not a reading list)."""
    pkg = ROOT / "src" / "eftsieve" / "theories" / theory.name.replace("-", "_")
    text = "".join(p.read_text() for p in pkg.glob("*.py") if p.name != "references.py")
    text += "".join(p.read_text() for p in (ROOT / "docs").glob("physics*.md"))
    for ref in theory.references:
        if "eprint" in ref:
            assert f"arXiv:{ref['eprint']}" in text, ref["key"]


def test_bibtex_reads_back_with_pybtex():
    refs = references_for(THEORIES)
    db = parse_string(to_bibtex(refs), "bibtex")
    assert list(db.entries) == [r["key"] for r in refs]
    for ref in refs:
        e = db.entries[ref["key"]]
        assert [str(p) for p in e.persons["author"]] == [
            str(p) for p in parse_string(bibtex_entry(ref), "bibtex").entries[ref["key"]]
            .persons["author"]]
        assert len(e.persons["author"]) == len(ref["authors"])
        assert e.fields["title"] == "{" + ref["title"] + "}"
        assert e.fields["year"] == str(ref["year"])
        assert e.type == ("article" if "journal" in ref else "misc")
        if "eprint" in ref:
            assert e.fields["eprint"] == ref["eprint"] and e.fields["archivePrefix"] == "arXiv"


def test_a_shared_paper_appears_once_and_must_agree():
    su2, su3 = get_theory("chpt-su2"), get_theory("chpt-su3")
    keys = [r["key"] for r in references_for([su2, su3])]
    assert len(keys) == len(set(keys)) and "ManoharMateu2008" in keys

    class Clash:
        name = "clash"
        references = ({**su2.references[2], "year": 1999},)

    with pytest.raises(InputError, match="two different papers"):
        references_for([su2, Clash()])


@pytest.mark.parametrize("bad, words", [
    ({"key": "x", "authors": ("A",), "title": "T", "year": 2000}, "journal or an arXiv"),
    ({"key": "x", "authors": "A and B", "title": "T", "year": 2000, "eprint": "1"}, "tuple"),
    ({"key": "x", "authors": ("A",), "title": "T", "year": 2000, "eprint": "1", "doi": "d"},
     "unknown field"),
    ({"authors": ("A",), "title": "T", "year": 2000, "eprint": "1"}, "missing"),
])
def test_malformed_references_are_refused(bad, words):
    with pytest.raises(InputError, match=words):
        check_reference(bad)
