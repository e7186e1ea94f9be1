"""Standalone HTML review report: per axis the verdict, the findings, the figures and plots.

One self-contained file: no network, no external assets, no JavaScript, inline
SVG plots, a Content-Security-Policy that forbids everything but inline styles
and data: images (docs/reliability.md §7.1). Every text and attribute value taken
from a spec or a file name goes through :func:`text` (control and bidi
characters as visible escapes, then ``html.escape`` with ``quote=True``); every
attribute is quoted; a datasheet link becomes a link only when it is an
``https:`` URL, with ``rel="noopener noreferrer"``.

The plot data come from :mod:`specguard.figures.curves`; this module only draws.
matplotlib is imported inside :func:`render` (never on the ``check`` path), with
the Agg backend and ``Figure`` (no pyplot), fixed rcParams and a fixed
``svg.hashsalt`` per plot, so the output is byte-identical across runs.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from ..figures.registry import Fig

if TYPE_CHECKING:  # the report model sits below the reporters
    from ..results import Report

import html as _html
import io
import math
import re
import urllib.parse
import warnings
from typing import Any

from ..findings import SEVERITY_ORDER
from .safe import escape_controls
from .text import grouped, related_label

DASH = "\u2013"
UNDERSCORE = "_"
CSP = "default-src 'none'; style-src 'unsafe-inline'; img-src data:"

CAUTION = (
    "specguard is a design aid, not a safety assessment. Drive electronics work with high "
    "voltages, large currents and stored energy that can injure or kill. Follow the applicable "
    "standards, local codes and licensed engineering practice, and verify every design by measurement."
)

# Neutral palette of our own: greys and one muted accent for limits.
INK = "#222222"
CURVE = "#3b5b7a"
SOFT = "#8a8a8a"
LIMIT = "#a0522d"
FILL = "#c9d3dc"
FILL_BAD = "#d9a38b"
FIX = "#2f6b4f"

_STYLE = """
body{font-family:system-ui,sans-serif;color:#222;background:#fff;margin:0 auto;max-width:64rem;
padding:1rem 1.5rem;line-height:1.4}
h1{font-size:1.5rem;margin:.5rem 0}
h2{font-size:1.25rem;margin:2rem 0 .5rem;border-bottom:2px solid #bbb;padding-bottom:.2rem}
h3{font-size:1.05rem;margin:1.2rem 0 .4rem}
.caution{border:1px solid #999;background:#f4f4f4;padding:.6rem .8rem;margin:.8rem 0}
.verdict{display:inline-block;padding:.1rem .5rem;border:1px solid #666;font-weight:600}
.v-pass{background:#eef2ee}.v-fail{background:#f3e6e0}.v-unread{background:#eeeeee}
.headline{margin:.4rem 0;font-size:1rem}.headline .top{font-weight:600}
table{border-collapse:collapse;margin:.4rem 0;font-size:.9rem}
th,td{border:1px solid #ccc;padding:.2rem .45rem;text-align:left;vertical-align:top}
th{background:#f2f2f2}td.num{text-align:right;white-space:nowrap;font-variant-numeric:tabular-nums}
.meaning{display:block;font-weight:400;color:#555;font-size:.8rem}
.waived{color:#666}
.muted{color:#666}code{font-family:ui-monospace,monospace;font-size:.88em;overflow-wrap:normal;word-break:normal}
code.id{white-space:nowrap}
table.findings{width:100%;table-layout:fixed}
table.findings col.c-sev{width:7.2rem}table.findings col.c-where{width:12.5rem}table.findings col.c-fix{width:17rem}
table.findings td{overflow-wrap:break-word}table.findings code{white-space:normal;overflow-wrap:anywhere}
.sev{white-space:nowrap;font-weight:600}
tr.sev-error td:first-child{border-left:5px solid #7f2a1c}
tr.sev-warning td:first-child{border-left:5px dashed #8c6d12}
tr.sev-info td:first-child{border-left:5px dotted #4f6f8a}
tr.sev-error .sev{color:#7f2a1c}tr.sev-warning .sev{color:#6f560c}tr.sev-info .sev{color:#3f5d76}
tr.sev-error{background:#fbf0ec}tr.sev-warning{background:#fbf6e6}
tr.consequence td:nth-child(n+2){padding-left:1.4rem}tr.consequence .sev{font-weight:400}
.because{display:block;font-size:.8rem;color:#555}
ul.fixes{margin:0;padding-left:1rem}ul.edits{margin:.1rem 0 .3rem;padding-left:.8rem;list-style:none}
.scroll{overflow-x:auto}
figure{margin:.8rem 0}figcaption{font-size:.85rem;color:#444}
svg{max-width:100%;height:auto}
ul.toc{columns:2}
@media print{
body{max-width:none;padding:0;font-size:10pt;background:none}
.caution,th,.verdict,tr.sev-error,tr.sev-warning,.v-pass,.v-fail,.v-unread{background:none}
section.axis{break-before:page;page-break-before:always}
tr,figure,.headline{break-inside:avoid;page-break-inside:avoid}
thead{display:table-header-group}
h2,h3{break-after:avoid;page-break-after:avoid}
ul.toc{columns:1}a{color:inherit;text-decoration:none}
.scroll{overflow:visible}
}
"""


# ------------------------------------------------------------------ escaping
def clean(value: object) -> str:
    """Visible escapes for control, bidi and separator characters and lone surrogates."""
    return escape_controls(str(value))


def text(value: object) -> str:
    """Any spec-derived value as HTML text or attribute content (quotes escaped too)."""
    return _html.escape(clean(value), quote=True)


def safe_url(url: object) -> str | None:
    """The URL when it may become a link (``https:`` with a host, nothing odd), else None."""
    if not isinstance(url, str):
        return None
    if clean(url) != url or any(c.isspace() for c in url) or "\\" in url:
        return None
    if not url.startswith("https://"):
        return None
    try:
        parts = urllib.parse.urlsplit(url)
    except ValueError:
        return None
    if parts.scheme != "https" or not parts.hostname:
        return None
    return url


def link(url: object) -> str:
    ok = safe_url(url)
    if ok is None:
        return f'<code>{text(url)}</code> <span class="muted">(not a https link; shown as text)</span>'
    return f'<a href="{text(ok)}" rel="noopener noreferrer">{text(ok)}</a>'


def anchor_id(index: int) -> str:
    # Ids never carry spec text: they are numbered.
    return f"axis-{index + 1}"


# ------------------------------------------------------------------- values
def show_value(value: float | bool | None, dimension: str, unit: str = "") -> str:
    """A figure value for display (plain text, not yet escaped)."""
    from ..model.units import format_si

    if value is None:
        return "\u2013"
    if isinstance(value, bool) or dimension == "flag":
        return "yes" if value else "no"
    try:
        v = float(value)
    except (TypeError, ValueError):
        return str(value)
    if not math.isfinite(v):
        return "unbounded" if v > 0 else ("\u2212unbounded" if v < 0 else "n/a")
    if dimension == "ratio":
        return f"{_g4(v * 100.0)} %"
    try:
        return format_si(v, dimension)
    except Exception:
        return f"{_g4(v)} {unit}".strip()


def _g4(v: float) -> str:
    """Four significant digits, never in scientific notation (30800, not 3.08e+04)."""
    from ..engine.pack import plain_number

    return plain_number(v, 4)


# -------------------------------------------------------------- verdicts
def verdict(result, fail_level: str) -> tuple[str, str]:
    """(css class, words) of one file's verdict."""
    if result.input_error is not None:
        return "v-unread", "could not be read"
    threshold = SEVERITY_ORDER[fail_level]
    failing = [f for f in result.findings if not _suppressed(f) and SEVERITY_ORDER.get(f.severity, 2) >= threshold]
    if any(f.rule in _UNREADABLE for f in failing) and result.spec is None:
        plural = "s" if len(failing) != 1 else ""
        # read, but not a spec this format accepts: never "could not be read"
        return "v-unread", f"not a valid spec ({len(failing)} finding{plural} at or above {fail_level})"
    if failing:
        return "v-fail", f"fails: {len(failing)} finding{'s' if len(failing) != 1 else ''} at or above {fail_level}"
    return "v-pass", "passes"


_UNREADABLE = frozenset(
    {
        "input-unreadable",
        "text-encoding",
        "yaml-syntax",
        "yaml-structure",
        "yaml-limit",
        "yaml-tag",
        "yaml-key",
        "schema-violation",
        "unit-invalid",
        "reference-invalid",
        "number-invalid",
        "internal-error",
    }
)


def _suppressed(f) -> bool:
    return f.waived is not None or bool(getattr(f, "baselined", False))


def file_counts(result) -> dict[str, int]:
    counts = {"error": 0, "warning": 0, "info": 0, "suppressed": 0}
    for f in result.findings:
        if _suppressed(f):
            counts["suppressed"] += 1
        else:
            counts[f.severity] = counts.get(f.severity, 0) + 1
    return counts


# -------------------------------------------------------------------- plots
class _Plotter:
    """Deterministic SVG drawing with matplotlib (imported here, not at module import)."""

    def __init__(self) -> None:
        import matplotlib

        matplotlib.use("Agg", force=True)
        from matplotlib.figure import Figure

        self._mpl: Any = matplotlib
        self._Figure = Figure
        self._count = 0
        self.rc: dict[str, Any] = {
            "svg.fonttype": "none",
            "text.parse_math": False,
            "text.usetex": False,
            "font.family": "DejaVu Sans",
            "font.size": 9.0,
            "axes.edgecolor": "#555555",
            "axes.labelcolor": INK,
            "axes.titlesize": 10.0,
            "axes.titleweight": "bold",
            "axes.grid": True,
            "grid.color": "#dddddd",
            "grid.linewidth": 0.6,
            "xtick.color": "#444444",
            "ytick.color": "#444444",
            "lines.linewidth": 1.6,
            "legend.fontsize": 8.0,
            "legend.frameon": False,
            "path.simplify": False,
            "savefig.dpi": 72,
            "axes.formatter.useoffset": False,
            # a fixed title position: the automatic one measures every tick label again
            "axes.titley": 1.0,
            "axes.titlepad": 5.0,
        }

    def figure(self, panels: int = 1, height: float = 3.1, bottom: float = 0.16, left: float | None = None):
        """A figure with fixed margins (the constrained layout doubled the drawing time,
        the 3 s budget for the demo); labels are short and fixed in size,
        spec names in tick labels are shortened to :data:`TICK_CHARS`."""
        width = 6.4 if panels == 1 else 9.2
        fig = self._Figure(figsize=(width, height), facecolor="white")
        if left is None:
            left = 0.1 if panels == 1 else 0.07
        fig.subplots_adjust(left=left, right=0.98, bottom=bottom, top=0.9, wspace=0.22)
        return fig

    def svg(self, fig, salt: str) -> str:
        self._count += 1
        with self._mpl.rc_context({**self.rc, "svg.hashsalt": f"specguard-{salt}"}), warnings.catch_warnings():
            # A spec name in a character the plot font lacks still draws (as a box).
            warnings.filterwarnings("ignore", message="Glyph .* missing from", category=UserWarning)
            buf = io.StringIO()
            fig.savefig(buf, format="svg", metadata={"Date": None, "Creator": None, "Format": None, "Type": None})
        return _inline_svg(buf.getvalue())

    def context(self):
        return self._mpl.rc_context(self.rc)


_GID = re.compile(r'\sid="[A-Za-z.]+_\d+"')
_SVG_TAG = re.compile(r"<[^>]*>")
_FORBIDDEN_SVG = re.compile(
    r"^<\s*/?\s*(script|foreignObject|iframe|object|embed|image|a)\b|\son[a-z]+\s*=|javascript:|data:", re.I
)


def _inline_svg(svg: str) -> str:
    """Strip the XML prolog and matplotlib's numbered group ids; refuse active content."""
    svg = svg[svg.index("<svg") :]
    svg = _GID.sub("", svg)
    svg = svg.replace("\r\n", "\n")
    # Text content is XML-escaped by matplotlib (no "<" or ">" in it), so the
    # tags are exactly the <...> runs; only they can carry active content.
    for tag in _SVG_TAG.findall(svg):
        if _FORBIDDEN_SVG.search(tag):
            raise ValueError("plot SVG holds active content; refusing to embed it")
    return svg


TICK_CHARS = 14


def _short(name: object, limit: int = TICK_CHARS) -> str:
    """A point name for a plot label: escaped, at most ``limit`` characters."""
    label = _label(name)
    return label if len(label) <= limit else label[: limit - 1] + "\u2026"


def _bar_bottom(panels) -> float:
    names = [n for b in panels for n in getattr(b, "points", ())]
    if len(names) > 4 or any(len(n) > 10 for n in names):
        return 0.36  # rotated point names and the x label under them
    return 0.22


def _label(value: object) -> str:
    """Spec text for a plot label: visible escapes, one line; matplotlib XML-escapes it."""
    return " ".join(clean(value).split())


def _legend_below(fig, axes) -> None:
    """One legend for the figure, below the axes (it never covers data)."""
    handles, labels, seen = [], [], set()
    for ax in axes:
        for h, lab in zip(*ax.get_legend_handles_labels(), strict=True):
            if lab not in seen and not lab.startswith("_"):
                seen.add(lab)
                handles.append(h)
                labels.append(lab)
    if handles:
        fig.legend(handles, labels, loc="lower center", ncol=min(3, len(handles)), bbox_to_anchor=(0.5, 0.0))


def _legend_room(bottom: float, entries: int, columns: int = 3) -> float:
    return bottom + 0.07 * ((max(entries, 1) + columns - 1) // columns) + 0.02


def _plot_waveform(p: _Plotter, wave, salt: str) -> str:
    with p.context():
        fig = p.figure(height=3.6, bottom=_legend_room(0.16, 3))
        ax = fig.add_subplot()
        t_us = wave.time * 1e6
        ax.plot(t_us, wave.current, color=CURVE, label="motor current")
        ax.axhline(wave.average, color=SOFT, linestyle="--", linewidth=1.0, label="average")
        ax.axhline(wave.rated_current, color=LIMIT, linestyle="-.", linewidth=1.2, label="rated current")
        ax.set_xlabel("time within one ripple period [\u00b5s]")
        ax.set_ylabel("current [A]")
        ax.set_title(f"Current over one PWM period at '{_short(wave.point, 40)}'")
        ax.set_xlim(float(t_us[0]), float(t_us[-1]))
        _legend_below(fig, [ax])
        return p.svg(fig, salt)


_FIX_MARKS = ("v", "^", "s", "D")


def _plot_sweeps(p: _Plotter, freq, ind, salt: str, fixes=(), per: str = "per lead") -> str:
    with p.context():
        panels = [s for s in (freq, ind) if s is not None]
        fig = p.figure(len(panels), height=3.9, bottom=_legend_room(0.16, 6))
        axes = fig.subplots(1, len(panels), squeeze=False)[0]
        for ax, sweep in zip(axes, panels, strict=True):
            if sweep.variable == "frequency":
                x = sweep.x / 1e3
                setting, needed = sweep.setting / 1e3, sweep.x_at_limit
                needed = None if needed is None else needed / 1e3
                ax.set_xscale("log")
                _log_ticks(ax, setting)
                ax.set_xlabel("PWM frequency per leg [kHz]")
                ax.set_title("Worst-case ripple vs PWM frequency")
                need_text = "lowest frequency within the limit"
                marks = [(v / 1e3, lab) for kind, v, lab in fixes if kind == "frequency"]
            else:
                x = sweep.x * 1e6
                setting, needed = sweep.setting * 1e6, sweep.x_at_limit
                needed = None if needed is None else needed * 1e6
                ax.set_xlabel(f"added inductance {per} [\u00b5H]")
                ax.set_title("Worst-case ripple vs added inductance")
                need_text = "smallest addition within the limit"
                marks = [(v * 1e6, lab) for kind, v, lab in fixes if kind == "inductance"]
            ax.plot(x, sweep.ripple, color=CURVE, label="peak-to-peak ripple")
            ax.axhline(sweep.limit, color=LIMIT, linestyle="-.", linewidth=1.2, label="limit")
            ax.plot([setting], [sweep.ripple_at_setting], marker="o", color=INK, linestyle="none", label="as specified")
            if needed is not None and x[0] <= needed <= x[-1]:
                ax.axvline(needed, color=SOFT, linestyle=":", linewidth=1.2, label=need_text)
            lo, hi = float(x[0]), float(x[-1])
            for k, (value, label) in enumerate(marks):
                ax.axvline(value, color=FIX, linestyle="--", linewidth=1.1)
                ax.plot(
                    [value],
                    [sweep.limit],
                    marker=_FIX_MARKS[k % len(_FIX_MARKS)],
                    color=FIX,
                    linestyle="none",
                    markersize=7,
                    label=label,
                )
                lo, hi = min(lo, value * (0.9 if sweep.variable == "frequency" else 1.0)), max(hi, value * 1.1)
            ax.set_xlim(lo, hi)
            ax.set_ylabel("ripple peak-to-peak [A]")
            ax.set_ylim(bottom=0.0)
        _legend_below(fig, axes)
        return p.svg(fig, salt)


def _plot_envelope(p: _Plotter, env, salt: str) -> str:
    import numpy as np

    with p.context():
        fig = p.figure(height=3.5, bottom=_legend_room(0.16, 2))
        ax = fig.add_subplot()
        degrees = np.degrees(env.angle)
        ax.plot(degrees, env.ripple, color=CURVE, label=f"ripple per PWM period (M = {_g4(env.modulation)})")
        ax.axhline(env.limit, color=LIMIT, linestyle="-.", linewidth=1.2, label="limit")
        ax.set_xlim(0.0, 360.0)
        ax.set_xticks([0, 60, 120, 180, 240, 300, 360])
        ax.set_ylim(bottom=0.0, top=max(float(np.max(env.ripple)), env.limit) * 1.15)
        ax.set_xlabel("electrical angle [\u00b0]")
        ax.set_ylabel("phase ripple peak-to-peak [A]")
        ax.set_title(f"Phase ripple over one electrical revolution at '{_short(env.point, 30)}'")
        _legend_below(fig, [ax])
        return p.svg(fig, salt)


def _log_ticks(ax, centre: float) -> None:
    from matplotlib.ticker import FixedLocator, FuncFormatter, NullFormatter, NullLocator

    ticks = [centre * k for k in (0.25, 0.5, 1.0, 2.0, 4.0)]
    ax.xaxis.set_major_locator(FixedLocator(ticks))
    ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _pos: _g4(v)))
    ax.xaxis.set_minor_locator(NullLocator())
    ax.xaxis.set_minor_formatter(NullFormatter())


def _plain_log_axis(axis) -> None:
    """Ticks at 1, 2 and 5 of each decade, labelled in plain digits (with text.parse_math
    off, matplotlib's default log labels would print as raw '$\\mathdefault{...}$')."""
    from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter, NullLocator

    axis.set_major_locator(LogLocator(base=10.0, subs=(1.0, 2.0, 5.0)))
    axis.set_major_formatter(FuncFormatter(lambda v, _pos: f"{v:.0f}" if v >= 1000.0 else _g4(v)))
    axis.set_minor_locator(NullLocator())
    axis.set_minor_formatter(NullFormatter())


def _bars(ax, bars, scale: float, colour_bad=None):
    import numpy as np

    values = np.asarray(bars.values, dtype=float) * scale
    shown = np.where(np.isfinite(values), values, 0.0)
    bad = [colour_bad is not None and bool(colour_bad(v)) for v in shown]
    colours = [FILL_BAD if b else FILL for b in bad]
    pos = list(range(len(bars.points)))
    drawn = ax.bar(pos, shown, color=colours, edgecolor="#555555", linewidth=0.6)
    for patch, b in zip(drawn, bad, strict=True):
        if b:  # a heavy dark edge as well as the colour: it survives greyscale printing
            patch.set_edgecolor(INK)
            patch.set_linewidth(1.8)
    rotate = len(pos) > 4 or any(len(n) > 10 for n in bars.points)
    ax.set_xticks(
        pos, [_short(n) for n in bars.points], rotation=30 if rotate else 0, ha="right" if rotate else "center"
    )
    ax.set_xlabel("operating point")
    for k, v in enumerate(values):
        if not math.isfinite(v):
            ax.text(k, 0.0, "n/a", ha="center", va="bottom", color=SOFT)


def _supply_panel(ax, window, empty_finding: bool) -> None:
    low, high, volts = window.low, window.high, window.voltage
    known = [v for v in (low, high, volts) if v is not None]
    top = max(known) * 1.25
    empty = window.empty or empty_finding
    if empty and low is not None and high is not None:
        ax.axhspan(
            min(low, high),
            max(low, high),
            facecolor=FILL_BAD,
            edgecolor=LIMIT,
            linewidth=1.5,
            label="empty supply window (supply_min above supply_max)",
        )
    elif low is not None and high is not None:
        ax.axhspan(low, high, facecolor=FILL, edgecolor="none", label="supply window")
    if low is not None:
        ax.axhline(low, color=CURVE, linestyle="--", linewidth=1.2, label=Fig.supply_min)
    if high is not None:
        ax.axhline(high, color=LIMIT, linestyle="-.", linewidth=1.2, label=Fig.supply_max)
    ax.plot([0.0], [volts], marker="o", color=INK, linestyle="none", label="supply as specified")
    if empty:
        ax.text(0.0, top * 0.94, "no supply voltage\nmeets both", ha="center", va="top", color=LIMIT, fontsize=8)
    ax.set_xlim(-1.0, 1.0)
    ax.set_xticks([])
    ax.set_ylim(0.0, top)
    ax.set_ylabel("supply voltage [V]")
    ax.set_title("Supply window")


def _plot_duty(p: _Plotter, duty, headroom, salt: str, window=None, empty_finding: bool = False) -> str:
    with p.context():
        panels = [b for b in (duty, headroom) if b is not None]
        count = len(panels) + (window is not None)
        fig = p.figure(2 if count > 1 else 1, height=3.9, bottom=_legend_room(_bar_bottom(panels), 6))
        ratios = [2.0] * len(panels) + ([1.1] if window is not None else [])
        axes = fig.subplots(1, count, squeeze=False, gridspec_kw={"width_ratios": ratios})[0]
        k = 0
        if duty is not None:
            ax = axes[k]
            k += 1
            _bars(ax, duty, 100.0, lambda v: v > duty.reference * 100.0)
            ax.axhline(duty.reference * 100.0, color=LIMIT, linestyle="-.", linewidth=1.2, label="maximum duty")
            ax.set_ylabel("leg duty [%]")
            ax.set_ylim(0.0, 105.0)
            ax.set_title("Duty per operating point")
        if headroom is not None:
            ax = axes[k]
            k += 1
            _bars(ax, headroom, 100.0, lambda v: v < 0.0)
            ax.axhline(0.0, color=LIMIT, linewidth=1.0)
            ax.set_ylabel("voltage headroom [%]")
            ax.set_title("Voltage headroom (1 \u2212 needed / available)")
        if window is not None:
            _supply_panel(axes[k], window, empty_finding)
        _legend_below(fig, axes)
        return p.svg(fig, salt)


def _plot_thermal(p: _Plotter, margin, trace, salt: str) -> str:
    with p.context():
        panels = [b for b in (margin, trace) if b is not None]
        fig = p.figure(len(panels), height=3.6, bottom=_legend_room(_bar_bottom([margin] if margin else []), 2))
        axes = fig.subplots(1, len(panels), squeeze=False)[0]
        k = 0
        if margin is not None:
            ax = axes[k]
            k += 1
            _bars(ax, margin, 1.0, lambda v: v < 0.0)
            ax.axhline(0.0, color=LIMIT, linewidth=1.0)
            ax.set_ylabel("winding margin [K]")
            ax.set_title("Thermal margin per operating point")
        if trace is not None:
            ax = axes[k]
            if trace.runaway:
                ax.text(
                    0.5,
                    0.5,
                    "thermal runaway: no periodic steady state",
                    ha="center",
                    va="center",
                    transform=ax.transAxes,
                    color=LIMIT,
                )
            else:
                ax.plot(trace.time, trace.temperature - 273.15, color=CURVE, label="winding")
                for s in trace.segment_starts[1:]:
                    ax.axvline(float(s), color="#cccccc", linewidth=0.8)
            if trace.limit is not None:
                ax.axhline(
                    trace.limit - 273.15,
                    color=LIMIT,
                    linestyle="-.",
                    linewidth=1.2,
                    label="permitted winding temperature",
                )
            ax.set_xlabel("time within one profile cycle [s]")
            ax.set_ylabel("winding temperature [\u00b0C]")
            ax.set_title("Winding temperature over the profile")
        _legend_below(fig, axes)
        return p.svg(fig, salt)


# ------------------------------------------------------------------ sections
_SEV_MARK = {"error": "\u25b2", "warning": "\u25c6", "info": "\u25cb"}


def top_problem(result):
    """The most severe finding that is not a consequence of another (spec order on ties)."""
    best = None
    for f in result.findings:
        if f.explained_by is not None or _suppressed(f):
            continue
        if best is None or SEVERITY_ORDER.get(f.severity, 0) > SEVERITY_ORDER.get(best.severity, 0):
            best = f
    return best


def _breakable(value: object) -> str:
    """Escaped text that may wrap only after a '/', '.' or ':' (never inside a word)."""
    return re.sub(r"([/.:])", r"\1<wbr>", text(value))


def _short_path(path: str) -> str:
    parts = path.replace("\\", "/").rsplit("/", 1)
    return parts[-1] if len(parts) > 1 else path


def _where(loc) -> str:
    full = f"{clean(loc.file)}:{loc.line}:{loc.column}"
    shown = f"{clean(_short_path(loc.file))}:{loc.line}:{loc.column}"
    out = f'<code title="{_html.escape(full, quote=True)}">{_breakable(shown)}</code>'
    if loc.pointer:
        out += f"<br><code>{_breakable(loc.pointer)}</code>"
    return out


def _edit_value(value) -> str:
    if isinstance(value, (tuple, list)) and value and all(isinstance(v, tuple) and len(v) == 2 for v in value):
        return ", ".join(f"{text(k)} = {text(v)}" for k, v in value)
    if isinstance(value, (tuple, list)):
        return ", ".join(text(v) for v in value)
    return text(value)


def _fixes_cell(f) -> str:
    fixes = getattr(f, "fixes", ()) or ()
    if fixes:
        items = []
        for fx in fixes:
            edits = "".join(
                f"<li><code>{_breakable(c.pointer)}</code> = <code>{_edit_value(c.value)}</code></li>"
                for c in fx.changes
            )
            reach = "" if fx.reaches == "clear" else f' <span class="muted">(leaves {text(fx.reaches)})</span>'
            items.append(f"<li>{text(fx.text)}{reach}" + (f'<ul class="edits">{edits}</ul>' if edits else "") + "</li>")
        return f'<ul class="fixes">{"".join(items)}</ul>'
    remedies = "".join(f"<li>{text(r)}</li>" for r in f.remedies)
    return f'<ul class="fixes">{remedies}</ul>' if remedies else DASH


def _finding_row(f, consequence: bool = False) -> str:
    cls = f"sev-{text(f.severity)}" + (" consequence" if consequence else "")
    status = ""
    if f.waived is not None:
        status = f'<br><span class="waived">waived: {text(f.waived)}</span>'
        cls += " waived"
    elif getattr(f, "baselined", False):
        status = '<br><span class="waived">held by the baseline</span>'
        cls += " waived"
    mark = ("\u21b3 " if consequence else "") + _SEV_MARK.get(f.severity, "?")
    sev = f'<span class="sev">{mark} {text(f.severity)}</span>'
    because = (
        f'<span class="because">consequence of <code class="id">{text(f.explained_by)}</code></span>'
        if consequence
        else ""
    )
    related = "".join(
        f'<br><span class="muted">{text(related_label(r))} '
        f'(<span title="{text(r.file)}:{r.line}:{r.column}">{_breakable(_short_path(r.file))}:{r.line}</span>)</span>'
        for r in f.related
    )
    numbers = "".join(f"<br><code>{text(n)}</code> = {text(_figure_display(n, v, u))}" for n, v, u in f.figures)
    point = f" at <strong>{text(f.operating_point)}</strong>" if f.operating_point else ""
    help_text = f'<br><span class="muted">{text(f.help)}</span>' if f.help else ""
    return (
        f'<tr class="{cls}"><td>{sev}{status}</td><td>{_where(f.location)}{related}</td>'
        f'<td><code class="id">{text(f.rule)}</code>{point}{because}<br>{text(f.message)}{numbers}{help_text}</td>'
        f"<td>{_fixes_cell(f)}</td></tr>"
    )


def _findings_table(result) -> str:
    if not result.findings:
        return '<p class="muted">No findings.</p>'
    rows = []
    for cause, consequences in grouped(result.findings):
        rows.append(_finding_row(cause))
        rows.extend(_finding_row(c, True) for c in consequences)
    return (
        '<table class="findings"><colgroup><col class="c-sev"><col class="c-where"><col><col class="c-fix">'
        "</colgroup><thead><tr><th>severity</th><th>where</th><th>rule, point and message</th>"
        "<th>fixes (pointer = value)</th></tr></thead><tbody>" + "".join(rows) + "</tbody></table>"
    )


def fix_levers(result) -> list[tuple[str, float, str]]:
    """The PWM frequency (leg, Hz) and the added inductance (H per lead or phase) each fix
    of the file proposes: (kind, SI value, label), in finding order, without repeats."""
    from ..model.units import parse_quantity

    spec = result.spec
    if spec is None:
        return []
    pwm = spec.stage.pwm
    per_leg = 2.0 if pwm.scheme == "unipolar-phase-shifted" and pwm.frequency_is != "leg" else 1.0
    chokes = spec.chokes
    out: list[tuple[str, float, str]] = []
    seen: set[tuple[str, float]] = set()

    def add(kind: str, value: float, label: str) -> None:
        key = (kind, round(value, 12))
        if key not in seen and math.isfinite(value) and value > 0:
            seen.add(key)
            out.append((kind, value, label))

    for f in result.findings:
        for fx in getattr(f, "fixes", ()) or ():
            for c in fx.changes:
                try:
                    if c.pointer == "/stage/pwm/frequency":
                        leg = parse_quantity(str(c.value), "frequency") / per_leg
                        add("frequency", leg, f"fix: {show_value(leg, 'frequency')} per leg")
                    elif c.pointer == "/chokes/inductance" and chokes is not None:
                        added = parse_quantity(str(c.value), "inductance") - float(chokes.inductance)
                        where = "per lead" if chokes.placement == "per-lead" else "per phase"
                        add("inductance", added, f"fix: +{show_value(added, 'inductance')} {where}")
                    elif c.pointer == "/chokes" and isinstance(c.value, (tuple, list)):
                        section = dict(c.value)
                        added = parse_quantity(str(section["inductance"]), "inductance")
                        where = "per lead" if section.get("placement") == "per-lead" else "per phase"
                        add("inductance", added, f"fix: +{show_value(added, 'inductance')} {where}")
                except (ValueError, KeyError, TypeError):
                    continue
    return out


# ------------------------------------------------------------ feasibility map
MAP_SIZE = 16  # cells per axis of the feasibility map (16 x 16 variants judged at once)


class _MapContext:
    """What judging variants needs, loaded once per report (the pack is the heavy part)."""

    def __init__(self, root) -> None:
        from pathlib import Path

        from ..pipeline import find_root

        self.root = Path(root) if root is not None else find_root(Path.cwd())
        self._pack = None
        self.judged: dict[str, Any] = {}

    @property
    def pack(self):
        if self._pack is None:
            from ..engine.evaluate import load_pack

            self._pack = load_pack()
        return self._pack


def _rejudge(result, ctx: _MapContext):
    """(spec, assembled data, judge, (findings, figures) as written) of one axis re-read
    for judging its variants (explore's ``_Judge``; policy overrides not applied), or None
    when the spec cannot be re-read here. Kept per file on ``ctx``: the map and the
    scheme comparison share the judge's memo."""
    from pathlib import Path

    from ..explore import _Judge
    from ..model import build
    from ..pipeline import _overrides, figure_settings, read_spec, relpath
    from ..source import Limits
    from ..source.library import LibraryCache, assemble

    if result.file in ctx.judged:
        return ctx.judged[result.file]
    ctx.judged[result.file] = None
    path = Path(result.file)
    if not path.is_absolute():
        path = ctx.root / path if (ctx.root / path).is_file() else Path.cwd() / path
    if result.spec is None or not path.is_file():
        return None
    try:
        rel = relpath(path, ctx.root)
        read = read_spec(path, ctx.root, rel, True)
        if not isinstance(read, tuple):
            return None
        doc = assemble(read[0], read[1], path, ctx.root, Limits(), LibraryCache(Limits()))
        if doc.data is None:
            return None
        spec, _ = build(doc.data, doc.locate)
        if spec is None:
            return None
        pack = ctx.pack
        overrides = _overrides(rel, None)
        judge = _Judge(spec, doc.locate, pack, overrides, figure_settings(pack, overrides))
        now = judge(doc.data)
    except Exception:  # an aid: a spec it cannot re-read gets none
        return None
    if now is None:
        return None
    ctx.judged[result.file] = (spec, doc.data, judge, now)
    return ctx.judged[result.file]


def feasibility(result, fail_level: str, ctx: _MapContext):
    """Variants of one axis over PWM frequency (leg) x added inductance per lead/phase,
    each judged by the whole pack as ``specguard explore`` judges them (its ``_Judge``,
    the levers of figures/levers.py). Returns a dict or None when the spec cannot be
    re-read here. Cell status: 2 passes at warning level, 1 passes at the fail level,
    0 fails, -1 not judged (the variant cannot be built). Rules no lever here clears (still
    failing at the highest frequency and at 3 and 30 times the motor's inductance added)
    do not count; they are listed."""
    import numpy as np

    from ..figures.batch import judge_batch
    from ..figures.levers import PWM_FREQUENCY_MAX, AddedInductance, PwmFrequency, topology

    again = _rejudge(result, ctx)
    if again is None:
        return None
    spec, data, judge, now = again
    findings_now, figures_now = now
    pwm = spec.stage.pwm
    per_leg = 2.0 if pwm.scheme == "unipolar-phase-shifted" and pwm.frequency_is != "leg" else 1.0
    f_leg = float(figures_now.axis[Fig.pwm_frequency_leg])
    choke = AddedInductance(topology(spec))
    freq = PwmFrequency(per_leg)
    motor_l = float(figures_now.axis.get(Fig.loop_inductance_catalogue) or figures_now.axis[Fig.loop_inductance])
    fixes = fix_levers(result)
    f_fix = [v for k, v, _ in fixes if k == "frequency"]
    l_fix = [v for k, v, _ in fixes if k == "inductance"]
    f_lo = f_leg / 2.0
    f_hi = min(max([f_leg * 8.0] + [v * 1.3 for v in f_fix]), PWM_FREQUENCY_MAX)
    l_lo = motor_l * 0.03
    l_hi = max([motor_l * 30.0] + [v * 1.3 for v in l_fix])
    freqs = np.geomspace(f_lo, f_hi, MAP_SIZE)
    henries = np.geomspace(l_lo, l_hi, MAP_SIZE)
    trials = (
        freq.edit(data, spec, PWM_FREQUENCY_MAX),
        choke.edit(data, spec, 3.0 * motor_l),
        choke.edit(data, spec, 30.0 * motor_l),
    )
    levels = list(dict.fromkeys((fail_level, "warning")))
    stuck: dict[str, frozenset] = {}
    for band in levels:
        threshold = SEVERITY_ORDER[band]
        rules = {f.rule for f in findings_now if SEVERITY_ORDER[f.severity] >= threshold}
        for edit in trials:
            judged = judge(edit.data) if edit is not None else None
            if judged is not None:
                rules &= {f.rule for f in judged[0] if SEVERITY_ORDER[f.severity] >= threshold}
        stuck[band] = frozenset(rules)
    # every cell at once (the batch evaluator, specguard.figures.batch)
    f_grid, l_grid = np.meshgrid(freqs, henries)  # [inductance row, frequency column]
    verdict = judge_batch(
        data, spec, judge.locate, judge.pack, judge.overrides, judge.settings, [(freq, f_grid), (choke, l_grid)]
    )
    status = np.where(verdict.passes(fail_level, stuck[fail_level]), 1, 0)
    status = np.where(verdict.passes("warning", stuck["warning"]), 2, status)
    status = np.where(verdict.valid, status, -1).reshape(l_grid.shape)
    where = "per lead" if topology(spec) == "dc" else "per phase"
    return {
        "freqs": freqs,
        "henries": henries,
        "status": status,
        "f_now": f_leg,
        "fixes": fixes,
        "ignored": sorted(stuck[fail_level] | stuck["warning"]),
        "where": where,
        "fail_level": fail_level,
        "variants": len(judge.memo) + verdict.size,
    }


SCHEME_VARIANTS = (
    ("bipolar", "two-level (bipolar), as written"),
    ("unipolar-single", "three-level, one leg switching (unipolar single)"),
    ("unipolar-phase-shifted", "three-level, phase-shifted legs (unipolar)"),
)


def scheme_comparison(result, ctx: _MapContext):
    """For an H-bridge axis on two-level (bipolar) PWM: the same axis on each three-level
    scheme at the same leg frequency, judged by the whole pack. Rows of (label, figures,
    findings) with the spec as written first; None when the axis is not two-level or
    cannot be re-read."""
    from ..figures.levers import _set
    from ..model import build
    from ..pipeline import _estimate_dependence

    spec = result.spec
    if spec is None or spec.motor.type != "brushed-dc" or spec.stage.pwm.scheme != "bipolar":
        return None
    again = _rejudge(result, ctx)
    if again is None:
        return None
    written, data, judge, _ = again
    rows = []
    for scheme, label in SCHEME_VARIANTS:
        variant = dict(data)
        if scheme != written.stage.pwm.scheme:
            _set(variant, ("stage", "pwm", "scheme"), scheme)
            _set(variant, ("stage", "pwm", "frequency_is"), "leg")
        judged = judge(variant)
        built, _ = build(variant, judge.locate)
        if judged is None or built is None:
            continue
        found, figures = judged
        # the verdicts as `check` gives them: one resting on the inductance estimate drops a band
        found = _estimate_dependence(found, built, figures, judge.locate, judge.pack, judge.overrides, judge.settings)
        rows.append((label, figures, found))
    return rows if len(rows) > 1 else None


def _worst(fs, name: str):
    values = [v for _, vals in fs.points if isinstance(v := vals.get(name), (int, float)) and not isinstance(v, bool)]
    return max(values) if values else None


def _scheme_table(rows, fail_level: str) -> str:
    """The schemes side by side: what the motor sees and what the pack says of each."""
    head = (
        "<tr><th>PWM scheme (same leg frequency)</th><th>ripple frequency</th><th>worst ripple peak-to-peak</th>"
        "<th>worst PWM eddy loss</th><th>hottest winding</th><th>findings</th></tr>"
    )
    body = []
    for label, fs, found in rows:
        counts = {k: sum(1 for f in found if f.severity == k) for k in ("error", "warning")}
        loss = _worst(fs, Fig.pwm_eddy_loss)
        loss_text = DASH if loss is None else show_value(loss, "power")
        if loss is not None and fs.axis.get(Fig.pwm_loss_estimated):
            low = _worst(fs, Fig.pwm_loss_low)
            loss_text = f"{show_value(low, 'power')} to {loss_text} (estimate)" if low is not None else loss_text
        hot = _worst(fs, Fig.winding_temperature)
        ripple = fs.axis.get(Fig.ripple_pp_worst, _worst(fs, Fig.ripple_pp))
        cells = (
            text(label),
            text(show_value(fs.axis.get(Fig.ripple_frequency), "frequency")),
            text(DASH if ripple is None else show_value(ripple, "current")),
            text(loss_text),
            text(DASH if hot is None else show_value(hot, "temperature")),
            f"{counts['error']} error(s), {counts['warning']} warning(s)",
        )
        body.append("<tr>" + "".join(f"<td>{c}</td>" for c in cells) + "</tr>")
    return (
        '<h4>PWM schemes side by side</h4><div class="scroll"><table class="schemes"><thead>'
        + head
        + "</thead><tbody>"
        + "".join(body)
        + "</tbody></table></div>"
        + '<p class="muted">Each row is the axis with only the PWM scheme changed, judged by the whole rule pack '
        f"as <code>specguard check</code> judges it (policy overrides not applied; fail level {text(fail_level)}). "
        "A three-level scheme halves the voltage "
        "step the motor sees; with phase-shifted legs the ripple frequency doubles as well. Whether the stage can "
        "run it is the stage's question.</p>"
    )


def _edges(values):
    import numpy as np

    logs = np.log10(values)
    mids = (logs[1:] + logs[:-1]) / 2.0
    step = logs[1] - logs[0] if len(logs) > 1 else 0.5
    return 10.0 ** np.concatenate([[logs[0] - step / 2.0], mids, [logs[-1] + step / 2.0]])


MAP_COLOURS = ("#f2f2f2", "#8f4a3a", "#d7b56d", "#cfe0d4")  # not judged, fails, fail level only, warning too


def _plot_feasibility(p: _Plotter, fmap, salt: str) -> str:
    import numpy as np
    from matplotlib.colors import ListedColormap
    from matplotlib.patches import Patch

    with p.context():
        legend_rows = (4 + len(fmap["fixes"]) + 1) // 2  # two columns
        height = 3.6 + 0.2 * legend_rows
        # in inches: tick labels and the x label (0.6), then 0.2 a legend row
        fig = p.figure(height=height, bottom=(0.6 + 0.2 * legend_rows) / height, left=0.13)
        ax = fig.add_subplot()
        fx = _edges(fmap["freqs"]) / 1e3
        ly = _edges(fmap["henries"]) * 1e6
        ax.pcolormesh(
            fx,
            ly,
            fmap["status"] + 1,
            cmap=ListedColormap(MAP_COLOURS),
            vmin=-0.5,
            vmax=3.5,
            edgecolors="#ffffff",
            linewidth=0.6,
        )
        # the failing cells also carry a cross, so the map reads in greyscale
        rows, cols = np.nonzero(fmap["status"] == 0)
        if len(rows):
            centres_x = np.sqrt(fx[cols] * fx[cols + 1])
            centres_y = np.sqrt(ly[rows] * ly[rows + 1])
            ax.scatter(centres_x, centres_y, marker="x", s=22, color="#f3e6e0", linewidths=1.0)
        ax.set_xscale("log")
        ax.set_yscale("log")
        _plain_log_axis(ax.xaxis)
        _plain_log_axis(ax.yaxis)
        ax.set_xlim(float(fx[0]), float(fx[-1]))
        ax.set_ylim(float(ly[0]), float(ly[-1]))
        ax.set_xlabel("PWM frequency per leg [kHz]")
        ax.set_ylabel(f"added inductance {fmap['where']} [\u00b5H]")
        ax.set_title("Feasibility: PWM frequency against added inductance")
        ax.grid(False)
        ax.plot(
            [fmap["f_now"] / 1e3],
            [float(ly[0])],
            marker="o",
            markersize=9,
            color=INK,
            linestyle="none",
            clip_on=False,
            label="as specified (no inductance added)",
        )
        for k, (kind, value, label) in enumerate(fmap["fixes"]):
            x = value / 1e3 if kind == "frequency" else fmap["f_now"] / 1e3
            y = value * 1e6 if kind == "inductance" else float(ly[0])
            ax.plot(
                [x],
                [y],
                marker=_FIX_MARKS[k % len(_FIX_MARKS)],
                markersize=8,
                color=FIX,
                markeredgecolor="white",
                linestyle="none",
                clip_on=False,
                label=label,
            )
        handles, labels = ax.get_legend_handles_labels()
        level = fmap["fail_level"]
        patches = [
            Patch(facecolor=MAP_COLOURS[3], edgecolor="#555555", label="passes at warning level"),
            Patch(facecolor=MAP_COLOURS[2], edgecolor="#555555", label=f"passes at the fail level ({level}) only"),
            Patch(facecolor=MAP_COLOURS[1], edgecolor="#555555", label="fails (cell crossed)"),
        ]
        if bool(np.any(fmap["status"] < 0)):
            patches.append(Patch(facecolor=MAP_COLOURS[0], edgecolor="#555555", label="not judged (cannot be built)"))
        every = patches + handles
        fig.legend(
            every, [h.get_label() for h in patches] + labels, loc="lower center", ncol=2, bbox_to_anchor=(0.5, 0.0)
        )
        return p.svg(fig, salt)


def _figure_display(name: str, value, unit: str) -> str:
    from ..figures.registry import FIGURE_DEFS

    fdef = FIGURE_DEFS.get(name)
    dim = fdef.dimension if fdef is not None else ""
    return show_value(value, dim, unit) if dim else f"{value} {unit}".strip()


def _figures_tables(fs) -> str:
    from ..figures.registry import FIGURE_DEFS

    parts = []
    axis_rows = []
    for name in FIGURE_DEFS:
        if name in fs.axis:
            d = FIGURE_DEFS[name]
            axis_rows.append(
                f'<tr><th scope="row" title="{text(d.meaning)}">{text(name)}'
                f'<span class="meaning">{text(d.meaning)}</span></th>'
                f"<td>{text(d.unit or DASH)}</td>"
                f'<td class="num">{text(show_value(fs.axis[name], d.dimension, d.unit))}</td>'
                f"{_note(fs, name)}</tr>"
            )
    for name in sorted(k for k in fs.axis if k not in FIGURE_DEFS):
        axis_rows.append(
            f'<tr><th scope="row">{text(name)}</th><td>\u2013</td>'
            f'<td class="num">{text(show_value(fs.axis[name], ""))}</td><td></td></tr>'
        )
    if axis_rows:
        parts.append(
            "<h4>Axis figures</h4><table><thead><tr><th>figure</th><th>unit</th><th>value</th><th>note</th>"
            "</tr></thead><tbody>" + "".join(axis_rows) + "</tbody></table>"
        )
    points = fs.point_names()
    names = [n for n in FIGURE_DEFS if any(n in vals for _, vals in fs.points)]
    names += sorted({k for _, vals in fs.points for k in vals if k not in FIGURE_DEFS})
    if points and names:
        head = "".join(f'<th scope="col">{text(p)}</th>' for p in points)
        rows = []
        for name in names:
            known = FIGURE_DEFS.get(name)
            meaning, dim, unit = (known.meaning, known.dimension, known.unit) if known else ("", "", "")
            cells = "".join(
                f'<td class="num">{text(show_value(vals.get(name), dim, unit))}</td>' for _, vals in fs.points
            )
            rows.append(
                f'<tr><th scope="row" title="{text(meaning)}">{text(name)}'
                f'<span class="meaning">{text(meaning)}</span></th><td>{text(unit or DASH)}</td>{cells}</tr>'
            )
        parts.append(
            f"<h4>Per operating point</h4><table><thead><tr><th>figure</th><th>SI unit</th>{head}</tr>"
            "</thead><tbody>" + "".join(rows) + "</tbody></table>"
        )
    if fs.missing:
        items = "".join(f"<li><code>{text(k)}</code>: {text(v)}</li>" for k, v in sorted(fs.missing.items()))
        parts.append(f'<p class="muted">Not computed:</p><ul class="muted">{items}</ul>')
    return "".join(parts)


def _note(fs, name: str) -> str:
    note = fs.notes.get(name) if fs.notes else None
    return f"<td>{text(note)}</td>" if note else "<td></td>"


def _spec_summary(spec) -> str:
    rows = []
    axis = getattr(spec, "axis", None)
    if axis is not None:
        if getattr(axis, "description", None):
            rows.append(("description", text(axis.description)))
        if getattr(axis, "tags", None):
            rows.append(("tags", ", ".join(text(t) for t in axis.tags)))
    motor = getattr(spec, "motor", None)
    if motor is not None:
        rows.append(("motor", text(f"{motor.type}, {motor.winding} winding")))
        if getattr(motor, "datasheet", None):
            rows.append(("datasheet", link(motor.datasheet)))
    stage = getattr(spec, "stage", None)
    if stage is not None:
        pwm = stage.pwm
        rows.append(
            (
                "PWM",
                text(
                    f"{pwm.scheme}, {show_value(pwm.frequency, 'frequency')}"
                    f" ({pwm.frequency_is or 'frequency kind not stated'})"
                ),
            )
        )
        rows.append(("supply", text(show_value(stage.supply.voltage, "voltage"))))
    points = getattr(spec, "operating_points", ()) or ()
    if points:
        rows.append(("operating points", ", ".join(text(p.name) for p in points)))
    if getattr(spec, "notes", None):
        rows.append(("notes", text(spec.notes)))
    waivers = getattr(spec, "waivers", ()) or ()
    for w in waivers:
        target = w.at or w.path or "whole axis"
        rows.append(
            (
                "waiver",
                f"<code>{text(w.rule)}</code> at {text(target)}: {text(w.reason)} "
                f"(approved by {text(w.approved_by)}, expires {text(w.expires)})",
            )
        )
    if not rows:
        return ""
    body = "".join(f'<tr><th scope="row">{k}</th><td>{v}</td></tr>' for k, v in rows)
    return f"<table><tbody>{body}</tbody></table>"


def _plots(plotter, spec, fs, index: int, ripple_fraction: float, result=None, fmap=None) -> str:
    from ..figures import curves
    from ..figures.levers import topology

    out = []
    salt = f"a{index + 1}"
    reasons = curves.unavailable(spec, fs)
    fixes = fix_levers(result) if result is not None else []
    per = "per lead" if topology(spec) == "dc" else "per phase"

    def fig(svg: str, caption: str, kind: str) -> None:
        out.append(f'<figure class="plot plot-{kind}">{svg}<figcaption>{caption}</figcaption></figure>')

    wave = curves.current_waveform(spec, fs) if fs is not None else None
    if wave is not None:
        fig(
            _plot_waveform(plotter, wave, f"{salt}-wave"),
            f"Exact periodic current at the operating point with the largest ripple ({text(wave.point)}): "
            f"ripple {text(show_value(wave.peak_to_peak, 'current'))} peak-to-peak, average "
            f"{text(show_value(wave.average, 'current'))}, rated {text(show_value(wave.rated_current, 'current'))}.",
            "waveform",
        )
    env = curves.ripple_envelope(spec, fs, ripple_fraction) if fs is not None else None
    if env is not None:
        fig(
            _plot_envelope(plotter, env, f"{salt}-envelope"),
            f"Peak-to-peak phase ripple of each PWM period over one electrical revolution at "
            f"{text(env.point)} (modulation index {_g4(env.modulation)}), resistance neglected within a period; "
            f"largest {text(show_value(float(env.ripple.max()), 'current'))}, limit "
            f"{text(show_value(env.limit, 'current'))}.",
            "envelope",
        )
    freq = curves.ripple_vs_frequency(spec, fs, ripple_fraction) if fs is not None else None
    ind = curves.ripple_vs_added_inductance(spec, fs, ripple_fraction) if fs is not None else None
    drawn = freq if freq is not None else ind
    if drawn is not None:
        limit = drawn.limit
        marked = " Triangles and squares on the limit line mark the proposed fixes." if fixes else ""
        fig(
            _plot_sweeps(plotter, freq, ind, f"{salt}-sweep", fixes, per),
            f"Worst case over the reachable duty range; limit {text(show_value(limit, 'current'))} "
            f"peak-to-peak ({_g4(ripple_fraction * 100)} % of rated current). The dot is the spec as written." + marked,
            "sweep",
        )
    duty = curves.duty_per_point(spec, fs) if fs is not None else None
    headroom = curves.voltage_headroom_per_point(spec, fs) if fs is not None else None
    window = curves.supply_window(spec, fs) if fs is not None else None
    empty_finding = result is not None and any(f.rule == "supply-window-empty" for f in result.findings)
    if duty is not None or headroom is not None:
        cap = "Leg duty against the stage's maximum duty; headroom below zero means the point cannot be reached."
        if window is not None and (window.empty or empty_finding):
            cap += (
                f" The supply window is empty: supply_min {text(show_value(window.low, 'voltage'))} is above "
                f"supply_max {text(show_value(window.high, 'voltage'))}."
            )
        fig(_plot_duty(plotter, duty, headroom, f"{salt}-duty", window, empty_finding), cap, "duty")
    margin = curves.thermal_margin_per_point(spec, fs) if fs is not None else None
    trace = curves.profile_temperature(spec, fs) if getattr(spec, "profile", None) is not None else None
    if margin is not None or trace is not None:
        cap = "Permitted minus steady-state winding temperature per point (below zero: too hot)."
        if trace is not None and not trace.runaway:
            cap += (
                f" Profile: periodic steady state, peak {text(show_value(trace.peak, 'temperature'))}, "
                f"mean {text(show_value(trace.mean, 'temperature'))}."
            )
        fig(_plot_thermal(plotter, margin, trace, f"{salt}-thermal"), cap, "thermal")
    if fmap is not None:
        ignored = (
            " Rules no lever here clears are left out of the shading: "
            + ", ".join(f'<code class="id">{text(r)}</code>' for r in fmap["ignored"])
            + "."
            if fmap["ignored"]
            else ""
        )
        fig(
            _plot_feasibility(plotter, fmap, f"{salt}-map"),
            f"Each cell is one variant (PWM frequency per leg, inductance added {text(fmap['where'])}) judged by the "
            f"whole rule pack as <code>specguard explore</code> judges it ({fmap['variants']} variants, policy "
            f"overrides not applied). The dot is the spec as written; the other marks are the proposed fixes."
            + ignored,
            "map",
        )
    if fs is None:
        reasons = {"all plots": "no figures were computed for this file"}
    shown = {"waveform": wave, "ripple_frequency": freq, "ripple_inductance": ind, "profile": trace}
    missing = [(k, v) for k, v in sorted(reasons.items()) if shown.get(k) is None]
    if missing:
        items = "".join(f"<li>{text(k.replace(UNDERSCORE, ' '))}: {text(v)}</li>" for k, v in missing)
        out.append(f'<p class="muted">Plots not drawn:</p><ul class="muted">{items}</ul>')
    return "".join(out)


def _needs_map(result, fail_level: str) -> bool:
    return result.spec is not None and any(
        not _suppressed(f) and SEVERITY_ORDER.get(f.severity, 0) >= SEVERITY_ORDER["warning"] for f in result.findings
    )


def _axis_section(plotter, result, index: int, fail_level: str, ripple_fraction: float, ctx=None) -> str:
    cls, words = verdict(result, fail_level)
    spec = result.spec
    name = getattr(getattr(spec, "axis", None), "name", None)
    title = (
        f'{text(name)} <span class="muted" title="{text(result.file)}">({_breakable(result.file)})</span>'
        if name
        else _breakable(result.file)
    )
    counts = file_counts(result)
    top = top_problem(result)
    if top is not None:
        at = f" at {text(top.operating_point)}" if top.operating_point else ""
        problem = (
            f' \u2013 top problem: <span class="top">{_SEV_MARK.get(top.severity, "")} {text(top.severity)}'
            f'{at}: {text(top.message)}</span> <code class="id">[{text(top.rule)}]</code>'
        )
    else:
        problem = ""
    parts = [
        f'<section class="axis" id="{anchor_id(index)}"><h2>{title}</h2>',
        f'<p class="headline"><span class="verdict {cls}">{text(words)}</span>{problem}</p>',
        f'<p class="muted">{counts["error"]} error(s), {counts["warning"]} warning(s), '
        f"{counts['info']} info, {counts['suppressed']} waived or baselined</p>",
    ]
    if result.input_error is not None:
        parts.append(f"<p>Cannot read this input: {text(result.input_error)}</p>")
    if spec is not None:
        parts.append(_spec_summary(spec))
    parts.append("<h3>Findings</h3>")
    parts.append(_findings_table(result))
    fs = getattr(result, "figures", None)
    if spec is not None:
        parts.append("<h3>Figures</h3>")
        parts.append(
            f'<div class="scroll">{_figures_tables(fs)}</div>'
            if fs is not None
            else '<p class="muted">No figures were computed.</p>'
        )
        fmap = None
        if plotter is not None and ctx is not None and fs is not None and _needs_map(result, fail_level):
            fmap = feasibility(result, fail_level, ctx)
        plots = _plots(plotter, spec, fs, index, ripple_fraction, result, fmap) if plotter is not None else ""
        if plots:
            parts.append("<h3>Plots</h3>" + plots)
        if ctx is not None and fs is not None and _needs_map(result, fail_level):
            schemes = scheme_comparison(result, ctx)
            if schemes is not None:
                parts.append(_scheme_table(schemes, fail_level))
    parts.append("</section>")
    return "".join(parts)


_STATE: dict[str, Any] = {}


def _section_job(index: int) -> str:
    report, plotter, ripple_fraction, ctx = _STATE["args"]
    r = report.files[index]
    return _axis_section(plotter, r, index, report.fail_level_of(r), ripple_fraction, ctx)


def _sections(report, plotter, ripple_fraction: float, ctx, jobs: int | None) -> list[str]:
    """The axis sections, drawn in up to ``jobs`` forked processes when there are plots
    to draw (matplotlib and the rule pack are loaded before the fork and inherited);
    put back in file order, so the report does not depend on the number of processes."""
    import multiprocessing
    import sys

    from ..parallel import _block_signals, _unblock_signals, default_jobs

    count = len(report.files)
    busy = [i for i, r in enumerate(report.files) if r.spec is not None]
    workers = min(jobs if jobs is not None else default_jobs(), len(busy))
    _STATE["args"] = (report, plotter, ripple_fraction, ctx)
    try:
        if plotter is None or workers < 2 or not sys.platform.startswith("linux"):
            return [_section_job(i) for i in range(count)]
        if ctx is not None and any(_needs_map(report.files[i], report.fail_level_of(report.files[i])) for i in busy):
            _ = ctx.pack  # load once, before the fork
        previous = _block_signals()
        try:
            pool = multiprocessing.get_context("fork").Pool(workers)
        finally:
            _unblock_signals(previous)
        try:
            # the heaviest sections (most findings) first, so the two processes finish together
            order = sorted(busy, key=lambda i: -len(report.files[i].findings))
            drawn = dict(zip(order, pool.map(_section_job, order, chunksize=1), strict=True))
        finally:
            pool.close()
            pool.join()
        return [drawn[i] if i in drawn else _section_job(i) for i in range(count)]
    finally:
        _STATE.clear()


def plots_unavailable() -> str | None:
    """Why the plots cannot be drawn here (the plotting library is missing or broken,
    with the one command that installs it), or None when they can."""
    import importlib.util

    try:
        found = importlib.util.find_spec("matplotlib") is not None
    except (ImportError, ValueError):
        found = False
    if not found:
        return "matplotlib is not installed; 'python -m pip install matplotlib' adds them"
    return None


def render(
    report: Report,
    *,
    generated: str | None = None,
    ripple_fraction: float = 0.2,
    title: str = "specguard review report",
    plots: bool = True,
    plots_note: str | None = None,
    root=None,
    feasibility_maps: bool = True,
    jobs: int | None = None,
) -> str:
    """The whole report as one HTML document (a pure function of the report).

    ``generated``: a date text to print (the CLI passes SOURCE_DATE_EPOCH when
    set); None prints no time at all. ``ripple_fraction``: the ripple limit as a
    fraction of rated current, when the rule's threshold is not known.
    ``plots=False`` leaves the plots out (and matplotlib unimported); ``plots_note``
    says why in the report. ``root``: the repository root the files are relative to
    (default: found from the working directory), for the feasibility maps, which
    re-read each spec with findings and judge 16 x 16 variants of it at once
    (``feasibility_maps=False`` leaves them out). ``jobs``: processes drawing the axis
    sections (default: the usable cores; at most one per axis with a spec); the output is the
    same for any number.
    """
    import gc

    # Drawing makes hundreds of thousands of short-lived objects; the collector's default
    # pace (a pass every 700 allocations) costs about 5 % of the report's time. Rarer
    # passes while the report is drawn (also in the forked drawing processes).
    pace = gc.get_threshold()
    gc.set_threshold(max(pace[0], _GC_PACE[0]), *_GC_PACE[1:])
    try:
        return _render(report, generated, ripple_fraction, title, plots, plots_note, root, feasibility_maps, jobs)
    finally:
        gc.set_threshold(*pace)


_GC_PACE = (50000, 50, 100)


def _render(report, generated, ripple_fraction, title, plots, plots_note, root, feasibility_maps, jobs) -> str:
    plotter = _Plotter() if plots else None
    ctx = _MapContext(root) if plots and feasibility_maps else None
    title_note = f'<p class="muted">Plots are not drawn in this report: {text(plots_note)}.</p>' if plots_note else ""
    counts = report.counts()
    status = report.exit_status()
    overall = {
        0: "passes",
        1: f"fails (findings at or above {report.fail_level})",
        2: "incomplete: some inputs could not be read",
        3: "specguard failed internally",
    }.get(status, "")
    toc = "".join(
        f'<li><a href="#{anchor_id(i)}">{text(getattr(getattr(r.spec, "axis", None), "name", None) or r.file)}</a>'
        f" \u2013 {text(verdict(r, report.fail_level_of(r))[1])}</li>"
        for i, r in enumerate(report.files)
    )
    head = (
        '<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
        f'<meta http-equiv="Content-Security-Policy" content="{_html.escape(CSP, quote=True)}">'
        '<meta name="referrer" content="no-referrer">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>{text(title)}</title><style>{_STYLE}</style></head><body>"
    )
    intro = [
        f"<h1>{text(title)}</h1>",
        f'<p class="caution"><strong>Caution.</strong> {text(CAUTION)}</p>',
        f'<p>Overall: <span class="verdict {"v-pass" if status == 0 else "v-fail"}">{text(overall)}</span> '
        f"\u2013 {counts['error']} error(s), {counts['warning']} warning(s), {counts['info']} info in "
        f"{report.file_count} file(s); fail level {text(report.fail_level)}.</p>",
    ]
    if generated:
        intro.append(f'<p class="muted">Generated {text(generated)}.</p>')
    if title_note:
        intro.append(title_note)
    if toc:
        intro.append(f'<ul class="toc">{toc}</ul>')
    sections = _sections(report, plotter, ripple_fraction, ctx, jobs)
    foot = (
        '<p class="muted">Written by specguard. Values in SI internally; shown in readable units.</p></body></html>\n'
    )
    return head + "".join(intro) + "".join(sections) + foot
