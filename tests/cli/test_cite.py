"""``eftsieve cite``: BibTeX for a theory, for a region file's theory, or for every theory."""

from __future__ import annotations

from pybtex.database import parse_string

from eftsieve.cli.main import main
from eftsieve.theories import available_theories, get_theory


def test_cite_a_theory_prints_its_references(capsys):
    assert main(["cite", "--theory", "scalar-eft"]) == 0
    db = parse_string(capsys.readouterr().out, "bibtex")
    assert list(db.entries) == [r["key"] for r in get_theory("scalar-eft").references]
    assert db.entries["CaronHuotVanDuong2020"].fields["eprint"] == "2011.02957"


def test_cite_a_region_cites_its_theory_and_writes_a_file(tmp_path, capsys):
    region = tmp_path / "r.json"
    assert main(["region", "--family", "second-derivative", "-o", str(region)]) == 0
    capsys.readouterr()
    bib = tmp_path / "refs.bib"
    assert main(["cite", "--region", str(region), "-o", str(bib)]) == 0
    db = parse_string(bib.read_text(), "bibtex")
    assert list(db.entries) == [r["key"] for r in get_theory("chpt-su2").references]
    assert "GasserLeutwyler1984" in db.entries


def test_cite_everything_lists_each_paper_once(capsys):
    assert main(["cite"]) == 0
    db = parse_string(capsys.readouterr().out, "bibtex")
    keys = {r["key"] for n in available_theories() for r in get_theory(n).references}
    assert set(db.entries) == keys


def test_unknown_theory_is_one_line(capsys):
    assert main(["cite", "--theory", "nope"]) == 2
    err = capsys.readouterr().err
    assert len(err.splitlines()) == 1 and "unknown theory 'nope'" in err
