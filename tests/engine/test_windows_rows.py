"""The windows sheet's rows without pandas: the same as the tables the report and the
``windows`` command print."""

from __future__ import annotations

from pathlib import Path

from wzq.engine import windows as W
from wzq.io.jsonplan import load_plan

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"


def test_rows_and_counts_are_the_tables() -> None:
    plan = load_plan(EXAMPLES / "kestrel_ridge_weeknight.json")
    found = W.plan_windows(plan)
    table = W.days_allowed_by_hour(found)
    counts = W.days_allowed_counts(found)
    assert [label for label, _ in counts] == list(table.columns)
    for k, (_, days) in enumerate(counts):
        assert days == [int(x) for x in table.iloc[:, k]]
    assert sum(sum(days) for _, days in counts) > 0  # some hour may be closed
    for rows, frame in (
        (W.longest_window_list(found, top=3), W.longest_windows(found, top=3)),
        (W.feasible_window_list(found, 4), W.feasible_starts(found, 4)),
    ):
        assert len(rows) == len(frame) > 0
        for w, rec in zip(rows, frame.itertuples(index=False), strict=True):
            assert (w.configuration, w.day_type, w.hours) == (
                rec.configuration,
                rec.day_type,
                rec.hours,
            )
            assert w.start == rec.start.to_pydatetime() and w.end == rec.end.to_pydatetime()
