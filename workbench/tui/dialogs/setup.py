"""The setup dialog: chart kind, sigma method, rule set (each rule in words), specification, author."""
from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Callable

from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Grid, Horizontal, Vertical, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Button, Input, Label, Select, Static

from workbench.core.charts import rules as R
from workbench.core.model import CHART_KINDS, SIGMA_METHODS, Layout, LayoutRequest, Settings, Spec, WorkbenchError
from workbench.tui.view import safe

RULE_SETS = ("western-electric", "nelson", "limits-only")
CAP_METHODS = ("auto", "normal", "box-cox", "percentile")
CUSTOM = "custom"


@dataclass(frozen=True)
class SetupResult:
    settings: Settings
    author: str
    request: LayoutRequest | None = None
    """A new column mapping (None: the mapping stays as it is)."""


MAPPED_KINDS = ("long", "wide", "individuals")
"""Layouts whose columns the setup can map (summary and count data keep the mapping they were opened with)."""
NONE = ""
"""The blank choice of a column select: no such column."""


@dataclass(frozen=True)
class MappingChoice:
    """What the setup needs to offer a new column mapping."""

    layout: Layout
    """The mapping in force."""
    columns: tuple[str, ...]
    """The file's column names."""
    check: Callable[[LayoutRequest], str | None]
    """Loads the data under a mapping; the one-line reason it does not load, or None."""


def _num(text: str, name: str) -> float | None:
    text = text.strip()
    if not text:
        return None
    try:
        v = float(text)
    except ValueError:
        raise WorkbenchError(f"{name}: not a number: {text!r}") from None
    if v != v or v in (float("inf"), float("-inf")):
        raise WorkbenchError(f"{name}: not a finite number")
    return v


def rules_text(spec: str) -> Text:
    """Every rule in words, marked when it is part of the chosen set."""
    t = Text()
    try:
        chosen = R.resolve(spec)
    except WorkbenchError as exc:
        return Text(str(exc), style="bold red")
    for rid in R.RULE_IDS:
        on_ = rid in chosen.ids
        t.append("✓ " if on_ else "  ", style="bold")
        t.append(f"{rid:<14}", style="bold" if on_ else "dim")
        t.append(chosen.rule(rid).words + "\n", style="" if on_ else "dim")
    return t


class SetupDialog(ModalScreen[SetupResult | None]):
    """Edit the setup; applying it records a settings event in the trail."""

    BINDINGS = [Binding("escape,q", "cancel", "Cancel", id="dialog-cancel"),
                Binding("ctrl+s", "apply", "Apply", id="dialog-apply")]

    def __init__(self, settings: Settings, author: str, resolved_chart: str, mapping: str = "",
                 choice: MappingChoice | None = None) -> None:
        super().__init__(classes="dialog-screen")
        self.settings, self.author, self.resolved = settings, author, resolved_chart
        self.mapping = mapping
        """The column mapping in words."""
        self.choice = choice if choice is not None and choice.layout.kind in MAPPED_KINDS and choice.columns else None
        """The columns that can be mapped anew (None: the mapping is shown, not changed here)."""

    def compose(self) -> ComposeResult:
        s, spec = self.settings, self.settings.spec or Spec()
        rules = s.rules or "western-electric"
        preset = rules if rules in RULE_SETS else CUSTOM
        text = lambda v: "" if v is None else f"{v:g}"  # noqa: E731
        with Vertical(classes="dialog wide-dialog"):
            yield Static(Text("Setup", style="bold"), classes="dialog-title")
            if self.mapping and self.choice is None:
                yield Static(Text(f"Columns: {self.mapping} (summary and count data keep the mapping they were "
                                  "opened with)"), id="setup-mapping", classes="dialog-prompt")
            elif self.mapping:
                yield Static(Text(f"Columns: {self.mapping} — map them differently at the end of this form"),
                             id="setup-mapping", classes="dialog-prompt")
            with VerticalScroll(classes="setup-fields"):
                with Grid(classes="setup-grid"):
                    yield Label(f"Chart kind (now {self.resolved})")
                    yield Select([(k, k) for k in ("auto",) + CHART_KINDS], value=s.chart, allow_blank=False,
                                 id="chart")
                    yield Label("Sigma method")
                    yield Select([(k, k) for k in SIGMA_METHODS], value=s.sigma, allow_blank=False, id="sigma")
                    yield Label("Rule set")
                    yield Select([(k, k) for k in RULE_SETS + (CUSTOM,)], value=preset, allow_blank=False,
                                 id="rules")
                    yield Label("Custom rules (comma list)")
                    yield Input(value=rules if preset == CUSTOM else "", id="custom",
                                placeholder="beyond-limits,trend,same-side:9", disabled=preset != CUSTOM)
                yield Static(rules_text(rules), id="rule-words")
                with Grid(classes="setup-grid"):
                    yield Label("Characteristic")
                    yield Input(value=s.name or "", id="name", placeholder="e.g. fill volume (default: the header)")
                    yield Label("Unit")
                    yield Input(value=s.unit or "", id="unit", placeholder="e.g. mL (default: the header)")
                    yield Label("LSL")
                    yield Input(value=text(spec.lsl), id="lsl", placeholder="lower specification limit")
                    yield Label("USL")
                    yield Input(value=text(spec.usl), id="usl", placeholder="upper specification limit")
                    yield Label("Target")
                    yield Input(value=text(spec.target), id="target", placeholder="(midpoint)")
                    yield Label("Required index")
                    yield Input(value=text(spec.required), id="required")
                    yield Label("Confidence")
                    yield Input(value=text(spec.confidence), id="confidence")
                    yield Label("Capability method")
                    yield Select([(k, k) for k in CAP_METHODS], value=spec.method, allow_blank=False, id="method")
                    yield Label("Author")
                    yield Input(value=self.author, id="author")
                if self.choice is not None:
                    lay, cols = self.choice.layout, self.choice.columns
                    pick = lambda v: v if v in cols else NONE  # noqa: E731
                    options = [(Text("(none)"), NONE)] + [(Text(safe(c)), c) for c in cols]
                    yield Static(Text("Columns of the data file", style="bold"))
                    with Grid(classes="setup-grid", id="mapping-grid"):
                        yield Label("Layout")
                        yield Select([(k, k) for k in MAPPED_KINDS], value=lay.kind, allow_blank=False,
                                     id="map-kind")
                        yield Label("Subgroup column")
                        yield Select(options, value=pick(lay.subgroup), allow_blank=False, id="map-subgroup")
                        yield Label("Stream column (long)")
                        yield Select(options, value=pick(lay.stream), allow_blank=False, id="map-stream")
                        yield Label("Value column (long, individuals)")
                        yield Select(options, value=pick(lay.value), allow_blank=False, id="map-value")
                        yield Label("Time column")
                        yield Select(options, value=pick(lay.time), allow_blank=False, id="map-time")
                        yield Label("Stream columns (wide)")
                        yield Input(value=",".join(lay.streams), id="map-streams", placeholder="e.g. H1,H2,H3")
            yield Label("", id="error", classes="dialog-error", markup=False)
            with Horizontal(classes="dialog-buttons"):
                yield Button("Apply", variant="primary", id="confirm")
                yield Button("Cancel", id="cancel")

    def _rules(self) -> str:
        preset = self.query_one("#rules", Select).value
        return self.query_one("#custom", Input).value.strip() if preset == CUSTOM else str(preset)

    @on(Select.Changed, "#rules")
    @on(Input.Changed, "#custom")
    def rules_changed(self) -> None:
        custom = self.query_one("#rules", Select).value == CUSTOM
        self.query_one("#custom", Input).disabled = not custom
        self.query_one("#rule-words", Static).update(rules_text(self._rules() or "limits-only"))

    def result(self) -> SetupResult:
        """The settings the fields describe (raises WorkbenchError with a one-line reason)."""
        val = lambda wid: self.query_one(f"#{wid}", Input).value  # noqa: E731
        rules = self._rules()
        R.resolve(rules)
        lsl, usl = _num(val("lsl"), "LSL"), _num(val("usl"), "USL")
        spec = None
        if lsl is not None or usl is not None:
            base = self.settings.spec or Spec()
            spec = replace(base, lsl=lsl, usl=usl, target=_num(val("target"), "target"),
                           required=_num(val("required"), "required index") or base.required,
                           confidence=_num(val("confidence"), "confidence") or base.confidence,
                           method=str(self.query_one("#method", Select).value))
            from workbench.core.capability.assess import validate_spec
            validate_spec(spec)
        elif val("target").strip():
            raise WorkbenchError("a target needs a specification: give LSL and/or USL")
        author = val("author").strip()
        if not author:
            raise WorkbenchError("the author needs some text")
        current = self.settings.rules or "western-electric"
        settings = replace(self.settings, chart=str(self.query_one("#chart", Select).value),
                           sigma=str(self.query_one("#sigma", Select).value),
                           rules=self.settings.rules if rules == current else rules, spec=spec,
                           name=val("name").strip() or None, unit=val("unit").strip() or None)
        return SetupResult(settings, author, self._request())

    def _request(self) -> LayoutRequest | None:
        """The column mapping the fields describe, when it differs from the one in force (checked by loading
        the data: raises WorkbenchError with the one-line reason it does not load)."""
        if self.choice is None:
            return None
        lay = self.choice.layout
        col = lambda wid: (lambda v: v if isinstance(v, str) and v else None)(  # noqa: E731
            self.query_one(f"#map-{wid}", Select).value)
        kind = str(self.query_one("#map-kind", Select).value)
        streams = tuple(x.strip() for x in self.query_one("#map-streams", Input).value.split(",") if x.strip())
        fields = {"subgroup": col("subgroup"), "time": col("time")}
        if kind == "long":
            fields.update(stream=col("stream"), value=col("value"))
        elif kind == "individuals":
            fields.update(value=col("value"))
        else:
            fields.update(streams=streams)
        now = {"subgroup": lay.subgroup, "time": lay.time, "stream": lay.stream, "value": lay.value,
               "streams": tuple(lay.streams)}
        if kind == lay.kind and all(now[k] == v for k, v in fields.items()):
            return None
        request = LayoutRequest(kind=kind, **fields)
        why = self.choice.check(request)
        if why:
            raise WorkbenchError(f"columns: {why}")
        return request

    @on(Button.Pressed, "#confirm")
    def action_apply(self) -> None:
        try:
            res = self.result()
        except WorkbenchError as exc:
            self.query_one("#error", Label).update(str(exc))
            return
        self.dismiss(res)

    @on(Button.Pressed, "#cancel")
    def action_cancel(self) -> None:
        self.dismiss(None)
