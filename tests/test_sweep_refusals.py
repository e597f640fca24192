"""What `turnabout sweep` refuses with exit 2 and a message: an empty grid, one of over
10,000 points without --large-grid (the bound is ours: about 8 core-hours of quick scans),
and a scheduler address where no scheduler answers."""

from __future__ import annotations

import pytest

from turnabout.cli import main
from turnabout.sweeps import grid as G


@pytest.mark.parametrize(
    "args, words",
    [
        (["--depth", ""], ["--depth", "empty list"]),
        (["--strips", " "], ["--strips", "empty list"]),
        # 9 strip counts x 1,200 depths = 10,800 points
        (["--strips", "8:16:9", "--depth", "0.13:0.16:1200"], ["10800 points", "--large-grid"]),
    ],
)
def test_an_empty_or_unconfirmed_large_grid_exits_2_before_any_work(
    tmp_path, capsys, monkeypatch, args, words
):
    monkeypatch.chdir(tmp_path)
    assert main(["sweep", *args, "--out", "r", "--quiet"]) == 2
    err = capsys.readouterr().err
    assert all(w in err for w in words), err
    assert "Traceback" not in err
    assert not (tmp_path / "r").exists()


def test_a_table_of_over_ten_thousand_rows_needs_the_flag(tmp_path, capsys):
    table = tmp_path / "t.csv"
    # 10,001 distinct points: depths 0.13 + k * 3e-6
    rows = [f"8,{0.13 + k * 3e-6:.6f}" for k in range(G.LARGE_GRID + 1)]
    table.write_text("strips,depth\n" + "\n".join(rows) + "\n", encoding="utf-8")
    assert main(["sweep", "--table", str(table), "--out", str(tmp_path / "r"), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert f"{G.LARGE_GRID + 1} points" in err and "--large-grid" in err
    assert not (tmp_path / "r").exists()


def test_the_flag_confirms_a_large_grid_and_the_hard_bound_stays():
    # confirmed: the points are built (and validated) without a scan
    pts = G.grid_points([8, 9], G.parse_values("--depth", "0.13:0.16:5001"), {}, large_ok=True)
    assert len(pts) == 10_002
    with pytest.raises(G.SweepInputError, match="--large-grid"):
        G.grid_points([8, 9], G.parse_values("--depth", "0.13:0.16:5001"), {})
    with pytest.raises(G.SweepInputError, match=f"at most {G.MAX_POINTS}"):
        G.check_size(G.MAX_POINTS + 1, large_ok=True)
    with pytest.raises(G.SweepInputError, match="no points"):
        G.check_size(0, large_ok=True)


def test_an_unreachable_scheduler_exits_2_naming_it(tmp_path, capsys):
    pytest.importorskip("distributed")
    # port 9 (discard) on this machine: nothing listens there (common practice)
    argv = ["sweep", "--strips", "8", "--depth", "0.15", "--scan-grid", "8", "31", "12",
            "--out", str(tmp_path / "r"), "--scheduler", "127.0.0.1:9", "--quiet"]  # fmt: skip
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert "127.0.0.1:9" in err and "cannot reach the scheduler" in err
    assert "Traceback" not in err
    assert not (tmp_path / "r").exists()
