"""The check states the corner plot's column cap when the fit has more parameters than
the plot shows (issue 17, item 10): one line in the terminal and in the report."""

from __future__ import annotations

import numpy as np

from eftsieve.cli.main import main


def _csv(path, n_extra: int, rows: int = 200) -> None:
    """Invented rows (common practice for a report test): lbar1, lbar2 inside the default
    chpt-su2 region, plus ``n_extra`` nuisance columns."""
    rng = np.random.default_rng(11)
    data = np.column_stack([rng.normal(3, 0.5, rows), rng.normal(4, 0.3, rows),
                            rng.normal(size=(rows, n_extra))])
    head = ",".join(["lbar1", "lbar2"] + [f"n{i}" for i in range(n_extra)])
    path.write_text(head + "\n" + "\n".join(",".join(f"{v:.6g}" for v in r) for r in data)
                    + "\n")


def _check(tmp_path, region_file, n_extra: int) -> str:
    _csv(tmp_path / "s.csv", n_extra)
    out = tmp_path / "out"
    assert main(["check", str(tmp_path / "s.csv"), "--theory", "chpt-su2", "--convention",
                 "lbar", "--pion-mass", "139.57", "--region", str(region_file), "-o",
                 str(out), "--seed", "1"]) == 0
    assert (out / "corner.png").is_file()
    return (out / "report.md").read_text()


def test_corner_cap_is_stated(tmp_path, su2_region, monkeypatch, capsys):
    from eftsieve.io import limits

    monkeypatch.setattr(limits, "MAX_PLOT_COLUMNS", 3)
    su2_region.save(tmp_path / "region.json")
    report = _check(tmp_path, tmp_path / "region.json", n_extra=4)
    line = ("The corner plot shows 3 of the fit's 6 parameters (the cap "
            "eftsieve.io.limits.MAX_PLOT_COLUMNS = 3): those the region constrains first, "
            "then the others in fit order.")
    assert line in report
    out = capsys.readouterr().out
    assert [ln.strip() for ln in out.splitlines()].count(line) == 1


def test_no_cap_line_when_every_parameter_is_drawn(tmp_path, su2_region, monkeypatch,
                                                   capsys):
    from eftsieve.io import limits

    monkeypatch.setattr(limits, "MAX_PLOT_COLUMNS", 3)
    su2_region.save(tmp_path / "region.json")
    report = _check(tmp_path, tmp_path / "region.json", n_extra=1)
    assert "MAX_PLOT_COLUMNS" not in report
    assert "MAX_PLOT_COLUMNS" not in capsys.readouterr().out
