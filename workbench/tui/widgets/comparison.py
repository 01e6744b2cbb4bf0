"""The stream comparison (Analysis.comparison) as text: means, SDs, tests and the advice."""
from __future__ import annotations

from rich.text import Text

from workbench.core.analysis import comparison_of
from workbench.core.model import Analysis
from workbench.core.text import fmt

from workbench.tui.view import safe


def comparison_text(a: Analysis) -> Text:
    """Per-stream means and SDs, ANOVA and Kruskal–Wallis, variance split and the advice."""
    try:
        cmp_ = comparison_of(a)
    except Exception as exc:  # a comparison that cannot be made is shown, not raised
        return Text(f"the streams cannot be compared: {exc}")
    if cmp_ is None:
        if a.dataset.counts is not None:
            return Text("count data: each stream's rate is in the table above and, over the neighbouring "
                        "subgroups, in the chart on the left")
        return Text("one stream only (or summary data): nothing to compare")
    t = Text()
    width = max([len(safe(s)) for s in cmp_.streams] + [6])
    t.append(f"{'stream':<{width}} {'mean':>10} {'SD':>8} {'n':>7}\n", style="dim underline")
    for s, m, sd, n in zip(cmp_.streams, cmp_.means, cmp_.sds, cmp_.counts):
        t.append(f"{safe(s):<{width}} {fmt(m):>10} {fmt(sd):>8} {n:>7,}\n")
    t.append(f"\nANOVA F {fmt(cmp_.anova_f)}, p {fmt(cmp_.anova_p)}\n")
    t.append(f"Kruskal–Wallis H {fmt(cmp_.kruskal_h)}, p {fmt(cmp_.kruskal_p)}\n")
    if cmp_.share_between is not None:
        t.append(f"between streams: {100 * cmp_.share_between:.0f}% of the variance\n")
    t.append("\n")
    t.append("Advice: ", style="bold")
    t.append(cmp_.advice)
    return t
