"""The Needs attention sheet: what a planner must act on, grouped by cause, first.

One row per cause (how many sites, what it costs, the fix the planner suggests), then the
largest cases of each cause, then every case in a table that filters by cause. The
groups come from :func:`planner.plan.attention.attention_of` (the plan's
``needs_attention``), the same the console prints.
"""

from __future__ import annotations

from openpyxl.utils import get_column_letter

from planner.plan.attention import attention_of
from planner.plan.numbers import finite_number
from planner.report import styles
from planner.report.cells import put
from planner.report.tables import (
    PRINT_ALL_ROWS_MAX,
    Column,
    field_of,
    plan_sites,
    seq,
    title,
    wrap_rows,
    write_table,
)

#: Cases of each cause shown in the printed block when the full list is long.
LARGEST_PER_CAUSE = 5


def _headline(plan, attention) -> str:
    n_sites = len(plan_sites(plan))
    groups = {g.get("cause"): g for g in seq(attention.get("groups"))}
    not_served = len(seq(attention.get("sites_not_served")))
    parts = [f"{n_sites - not_served:,} of {n_sites:,} sites served" if n_sites else "no sites"]
    if "at_risk" in groups:
        parts.append(f"{groups['at_risk'].get('count', 0):,} may fail before their next visit")
    if "heavy_trip" in groups:
        parts.append(f"{groups['heavy_trip'].get('count', 0):,} trips over the payload")
    return "Needs attention: " + "; ".join(parts)


def _note(attention, cur) -> str:
    threshold = finite_number(attention.get("lost_load_threshold_frac")) or 0.0
    payload = finite_number(attention.get("payload_flag_kg"))
    text = (f"A site counts as not served when no design can serve it or when its pack still loses "
            f"more than {threshold:.0%} of its yearly load: stand-alone supplies for telemetry and "
            "telecom are designed to lose about 1 % of their load or less (common practice). "
            f"Costs in {cur or 'the study currency'}, present value unless the column says otherwise.")
    if payload:
        text += f" Trips are flagged above {payload:,.0f} kg of packs."
    return text


def _case_columns(cur, money) -> list[Column]:
    return [Column("Cause", field_of("title"), width=26),
            Column("Site or trip", field_of("id"), width=14),
            Column("Site name", field_of("name"), optional=True, width=18),
            Column("Region", field_of("region"), optional=True, width=14),
            Column("What", field_of("detail"), width=50),
            Column("Suggested fix", lambda r: r.get("fix") or r.get("group_fix"), width=40),
            Column(f"Cost [{cur}]", field_of("cost"), money, optional=True, width=12)]


def _cases(groups, limit=None) -> list[dict]:
    out = []
    for group in groups:
        items = seq(group.get("items"))
        for item in items[:limit] if limit else items:
            if isinstance(item, dict):
                out.append({**item, "title": group.get("title"), "group_fix": group.get("fix")})
    return out


def attention_sheet(ws, plan, fmt) -> None:
    cur, money = fmt["cur"], fmt["money"]
    attention = attention_of(plan)
    groups = [g for g in seq(attention.get("groups")) if isinstance(g, dict)]
    title(ws, _headline(plan, attention), _note(attention, cur))
    ws.merge_cells(start_row=2, start_column=1, end_row=2, end_column=7)
    ws.cell(row=2, column=1).alignment = styles.WRAP_TOP
    ws.row_dimensions[2].height = 30
    put(ws, 4, 1, "By cause, in the order to act on them").font = styles.SECTION_FONT
    if not groups:
        put(ws, 5, 1, "Nothing needs attention: every site is served and none is likely to fail "
                      "before its next visit.")
        ws.freeze_panes = "A3"
        styles.landscape_fit_width(ws, area="A1:G5")
        return
    cols = [Column("Cause", field_of("title"), width=26),
            Column("Sites or trips", field_of("count"), styles.INTEGER, width=14),
            Column("Counts as not served", lambda g: "yes" if g.get("not_served") else "no", width=18),
            Column(f"Cost [{cur}]", field_of("cost"), money, width=14),
            Column("What the cost is", field_of("cost_meaning"), width=50),
            Column("Suggested fix", field_of("fix"), width=40)]
    _, last = write_table(ws, 5, 1, cols, groups, drop_empty=False)
    wrap_rows(ws, 6, last, len(cols))
    cases = _cases(groups)
    row = last + 2
    if len(cases) > PRINT_ALL_ROWS_MAX:
        put(ws, row, 1, f"The largest {LARGEST_PER_CAUSE} cases of each cause").font = styles.SECTION_FONT
        kept, block_last = write_table(ws, row + 1, 1, _case_columns(cur, money),
                                       _cases(groups, LARGEST_PER_CAUSE))
        wrap_rows(ws, row + 2, block_last, len(kept))
        print_end = block_last
        row = block_last + 2
        put(ws, row, 1, f"Every case ({len(cases):,}): filter the Cause column; not printed").font = \
            styles.SECTION_FONT
    else:
        put(ws, row, 1, f"Every case ({len(cases):,})").font = styles.SECTION_FONT
        print_end = None
    kept, table_last = write_table(ws, row + 1, 1, _case_columns(cur, money), cases)
    if print_end is None:
        wrap_rows(ws, row + 2, table_last, len(kept))
        print_end = table_last
    ws.auto_filter.ref = f"A{row + 1}:{get_column_letter(len(kept))}{table_last}"
    ws.freeze_panes = "A3"
    styles.landscape_fit_width(ws, area=f"A1:{get_column_letter(len(kept))}{print_end}")
