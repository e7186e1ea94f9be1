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
from .text import related_label

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

_STYLE = """
body{font-family:system-ui,sans-serif;color:#222;background:#fff;margin:0 auto;max-width:62rem;
padding:1rem 1.5rem;line-height:1.4}
h1{font-size:1.5rem;margin:.5rem 0}
h2{font-size:1.25rem;margin:2rem 0 .5rem;border-bottom:2px solid #bbb;padding-bottom:.2rem}
h3{font-size:1.05rem;margin:1.2rem 0 .4rem}
.caution{border:1px solid #999;background:#f4f4f4;padding:.6rem .8rem;margin:.8rem 0}
.verdict{display:inline-block;padding:.1rem .5rem;border:1px solid #666;font-weight:600}
.v-pass{background:#eef2ee}.v-fail{background:#f3e6e0}.v-unread{background:#eeeeee}
table{border-collapse:collapse;margin:.4rem 0;font-size:.9rem}
th,td{border:1px solid #ccc;padding:.2rem .45rem;text-align:left;vertical-align:top}
th{background:#f2f2f2}td.num{text-align:right;white-space:nowrap;font-variant-numeric:tabular-nums}
.meaning{display:block;font-weight:400;color:#555;font-size:.8rem}
.sev-error{font-weight:700}.sev-warning{font-weight:600}.waived{color:#666}
.muted{color:#666}code{font-family:ui-monospace,monospace;font-size:.88em;word-break:break-all}
figure{margin:.8rem 0}figcaption{font-size:.85rem;color:#444}
svg{max-width:100%;height:auto}
ul.toc{columns:2}
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
    out = f"{v:.4g}"
    return "0" if out in ("-0", "0") else out


# -------------------------------------------------------------- verdicts
def verdict(result, fail_level: str) -> tuple[str, str]:
    """(css class, words) of one file's verdict."""
    if result.input_error is not None:
        return "v-unread", "could not be read"
    threshold = SEVERITY_ORDER[fail_level]
    failing = [f for f in result.findings if not _suppressed(f) and SEVERITY_ORDER.get(f.severity, 2) >= threshold]
    if any(f.rule in _UNREADABLE for f in failing) and result.spec is None:
        plural = "s" if len(failing) != 1 else ""
        return "v-unread", f"could not be read ({len(failing)} finding{plural} at or above {fail_level})"
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
        }

    def figure(self, panels: int = 1, height: float = 3.1, bottom: float = 0.16):
        """A figure with fixed margins (the constrained layout doubled the drawing time,
        the 3 s budget for the demo); labels are short and fixed in size,
        spec names in tick labels are shortened to :data:`TICK_CHARS`."""
        width = 6.4 if panels == 1 else 9.2
        fig = self._Figure(figsize=(width, height), facecolor="white")
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
        return 0.3
    return 0.16


def _label(value: object) -> str:
    """Spec text for a plot label: visible escapes, one line; matplotlib XML-escapes it."""
    return " ".join(clean(value).split())


def _plot_waveform(p: _Plotter, wave, salt: str) -> str:
    with p.context():
        fig = p.figure()
        ax = fig.add_subplot()
        t_us = wave.time * 1e6
        ax.plot(t_us, wave.current, color=CURVE, label="motor current")
        ax.axhline(wave.average, color=SOFT, linestyle="--", linewidth=1.0, label="average")
        ax.axhline(wave.rated_current, color=LIMIT, linestyle="-.", linewidth=1.2, label="rated current")
        ax.set_xlabel("time within one ripple period [\u00b5s]")
        ax.set_ylabel("current [A]")
        ax.set_title(f"Current over one PWM period at '{_short(wave.point, 40)}'")
        ax.set_xlim(float(t_us[0]), float(t_us[-1]))
        ax.legend(loc="upper right")
        return p.svg(fig, salt)


def _plot_sweeps(p: _Plotter, freq, ind, salt: str) -> str:
    with p.context():
        panels = [s for s in (freq, ind) if s is not None]
        fig = p.figure(len(panels))
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
            else:
                x = sweep.x * 1e6
                setting, needed = sweep.setting * 1e6, sweep.x_at_limit
                needed = None if needed is None else needed * 1e6
                ax.set_xlabel("added inductance per lead [\u00b5H]")
                ax.set_title("Worst-case ripple vs added inductance")
                need_text = "smallest addition within the limit"
            ax.plot(x, sweep.ripple, color=CURVE, label="peak-to-peak ripple")
            ax.axhline(sweep.limit, color=LIMIT, linestyle="-.", linewidth=1.2, label="limit")
            ax.plot([setting], [sweep.ripple_at_setting], marker="o", color=INK, linestyle="none", label="as specified")
            if needed is not None and x[0] <= needed <= x[-1]:
                ax.axvline(needed, color=SOFT, linestyle=":", linewidth=1.2, label=need_text)
            ax.set_ylabel("ripple peak-to-peak [A]")
            ax.set_ylim(bottom=0.0)
            ax.legend(loc="upper right")
        return p.svg(fig, salt)


def _log_ticks(ax, centre: float) -> None:
    from matplotlib.ticker import FixedLocator, FuncFormatter, NullFormatter, NullLocator

    ticks = [centre * k for k in (0.25, 0.5, 1.0, 2.0, 4.0)]
    ax.xaxis.set_major_locator(FixedLocator(ticks))
    ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _pos: _g4(v)))
    ax.xaxis.set_minor_locator(NullLocator())
    ax.xaxis.set_minor_formatter(NullFormatter())


def _bars(ax, bars, scale: float, colour_bad=None):
    import numpy as np

    values = np.asarray(bars.values, dtype=float) * scale
    shown = np.where(np.isfinite(values), values, 0.0)
    colours = [FILL_BAD if colour_bad is not None and colour_bad(v) else FILL for v in shown]
    pos = list(range(len(bars.points)))
    ax.bar(pos, shown, color=colours, edgecolor="#555555", linewidth=0.6)
    rotate = len(pos) > 4 or any(len(n) > 10 for n in bars.points)
    ax.set_xticks(
        pos, [_short(n) for n in bars.points], rotation=30 if rotate else 0, ha="right" if rotate else "center"
    )
    for k, v in enumerate(values):
        if not math.isfinite(v):
            ax.text(k, 0.0, "n/a", ha="center", va="bottom", color=SOFT)


def _plot_duty(p: _Plotter, duty, headroom, salt: str) -> str:
    with p.context():
        panels = [b for b in (duty, headroom) if b is not None]
        fig = p.figure(len(panels), bottom=_bar_bottom(panels))
        axes = fig.subplots(1, len(panels), squeeze=False)[0]
        k = 0
        if duty is not None:
            ax = axes[k]
            k += 1
            _bars(ax, duty, 100.0, lambda v: v > duty.reference * 100.0)
            ax.axhline(duty.reference * 100.0, color=LIMIT, linestyle="-.", linewidth=1.2, label="maximum duty")
            ax.set_ylabel("leg duty [%]")
            ax.set_ylim(0.0, 105.0)
            ax.set_title("Duty per operating point")
            ax.legend(loc="lower right")
        if headroom is not None:
            ax = axes[k]
            _bars(ax, headroom, 100.0, lambda v: v < 0.0)
            ax.axhline(0.0, color=LIMIT, linewidth=1.0)
            ax.set_ylabel("voltage headroom [%]")
            ax.set_title("Voltage headroom (1 \u2212 needed / available)")
        return p.svg(fig, salt)


def _plot_thermal(p: _Plotter, margin, trace, salt: str) -> str:
    with p.context():
        panels = [b for b in (margin, trace) if b is not None]
        fig = p.figure(len(panels), bottom=_bar_bottom([margin] if margin is not None else []))
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
            ax.legend(loc="upper right")
        return p.svg(fig, salt)


# ------------------------------------------------------------------ sections
def _findings_table(result) -> str:
    if not result.findings:
        return '<p class="muted">No findings.</p>'
    rows = []
    for f in result.findings:
        loc = f.location
        where = f"{clean(loc.file)}:{loc.line}:{loc.column}"
        pointer = f"<br><code>{text(loc.pointer)}</code>" if loc.pointer else ""
        related = "".join(
            f'<br><span class="muted">{text(related_label(r))} ({text(r.file)}:{r.line}:{r.column})</span>'
            for r in f.related
        )
        numbers = "<br>".join(f"<code>{text(n)}</code> = {text(_figure_display(n, v, u))}" for n, v, u in f.figures)
        remedies = "".join(f"<li>{text(r)}</li>" for r in f.remedies)
        remedies = f"<ul>{remedies}</ul>" if remedies else ""
        status = ""
        cls = f"sev-{text(f.severity)}"
        if f.waived is not None:
            status = f'<br><span class="waived">waived: {text(f.waived)}</span>'
            cls += " waived"
        elif getattr(f, "baselined", False):
            status = '<br><span class="waived">held by the baseline</span>'
            cls += " waived"
        help_text = f'<br><span class="muted">{text(f.help)}</span>' if f.help else ""
        rows.append(
            f'<tr class="{cls}"><td>{text(f.severity)}{status}</td>'
            f"<td><code>{_html.escape(where, quote=True)}</code>{pointer}{related}</td>"
            f"<td>{text(f.operating_point) if f.operating_point else DASH}</td>"
            f"<td>{text(f.message)} <code>[{text(f.rule)}]</code>{help_text}</td>"
            f"<td>{numbers or DASH}</td><td>{remedies or DASH}</td></tr>"
        )
    return (
        "<table><thead><tr><th>severity</th><th>location</th><th>point</th><th>message</th>"
        "<th>numbers</th><th>remedies</th></tr></thead><tbody>" + "".join(rows) + "</tbody></table>"
    )


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


def _plots(plotter, spec, fs, index: int, ripple_fraction: float) -> str:
    from ..figures import curves

    out = []
    salt = f"a{index + 1}"
    reasons = curves.unavailable(spec, fs)

    def fig(svg: str, caption: str) -> None:
        out.append(f"<figure>{svg}<figcaption>{caption}</figcaption></figure>")

    wave = curves.current_waveform(spec, fs) if fs is not None else None
    if wave is not None:
        fig(
            _plot_waveform(plotter, wave, f"{salt}-wave"),
            f"Exact periodic current at the operating point with the largest ripple ({text(wave.point)}): "
            f"ripple {text(show_value(wave.peak_to_peak, 'current'))} peak-to-peak, average "
            f"{text(show_value(wave.average, 'current'))}, rated {text(show_value(wave.rated_current, 'current'))}.",
        )
    freq = curves.ripple_vs_frequency(spec, fs, ripple_fraction) if fs is not None else None
    ind = curves.ripple_vs_added_inductance(spec, fs, ripple_fraction) if fs is not None else None
    drawn = freq if freq is not None else ind
    if drawn is not None:
        limit = drawn.limit
        fig(
            _plot_sweeps(plotter, freq, ind, f"{salt}-sweep"),
            f"Worst case over the reachable duty range; limit {text(show_value(limit, 'current'))} "
            f"peak-to-peak ({_g4(ripple_fraction * 100)} % of rated current). The dot is the spec as written.",
        )
    duty = curves.duty_per_point(spec, fs) if fs is not None else None
    headroom = curves.voltage_headroom_per_point(spec, fs) if fs is not None else None
    if duty is not None or headroom is not None:
        fig(
            _plot_duty(plotter, duty, headroom, f"{salt}-duty"),
            "Leg duty against the stage's maximum duty; headroom below zero means the point cannot be reached.",
        )
    margin = curves.thermal_margin_per_point(spec, fs) if fs is not None else None
    trace = curves.profile_temperature(spec, fs) if getattr(spec, "profile", None) is not None else None
    if margin is not None or trace is not None:
        cap = "Permitted minus steady-state winding temperature per point (below zero: too hot)."
        if trace is not None and not trace.runaway:
            cap += (
                f" Profile: periodic steady state, peak {text(show_value(trace.peak, 'temperature'))}, "
                f"mean {text(show_value(trace.mean, 'temperature'))}."
            )
        fig(_plot_thermal(plotter, margin, trace, f"{salt}-thermal"), cap)
    if fs is None:
        reasons = {"all plots": "no figures were computed for this file"}
    shown = {"waveform": wave, "ripple_frequency": freq, "ripple_inductance": ind, "profile": trace}
    missing = [(k, v) for k, v in sorted(reasons.items()) if shown.get(k) is None]
    if missing:
        items = "".join(f"<li>{text(k.replace(UNDERSCORE, ' '))}: {text(v)}</li>" for k, v in missing)
        out.append(f'<p class="muted">Plots not drawn:</p><ul class="muted">{items}</ul>')
    return "".join(out)


def _axis_section(plotter, result, index: int, fail_level: str, ripple_fraction: float) -> str:
    cls, words = verdict(result, fail_level)
    spec = result.spec
    name = getattr(getattr(spec, "axis", None), "name", None)
    title = f'{text(name)} <span class="muted">({text(result.file)})</span>' if name else text(result.file)
    counts = file_counts(result)
    parts = [
        f'<section id="{anchor_id(index)}"><h2>{title}</h2>',
        f'<p><span class="verdict {cls}">{text(words)}</span> '
        f'<span class="muted">{counts["error"]} error(s), {counts["warning"]} warning(s), '
        f"{counts['info']} info, {counts['suppressed']} waived or baselined</span></p>",
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
        parts.append(_figures_tables(fs) if fs is not None else '<p class="muted">No figures were computed.</p>')
        plots = _plots(plotter, spec, fs, index, ripple_fraction) if plotter is not None else ""
        if plots:
            parts.append("<h3>Plots</h3>" + plots)
    parts.append("</section>")
    return "".join(parts)


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
) -> str:
    """The whole report as one HTML document (a pure function of the report).

    ``generated``: a date text to print (the CLI passes SOURCE_DATE_EPOCH when
    set); None prints no time at all. ``ripple_fraction``: the ripple limit as a
    fraction of rated current, when the rule's threshold is not known.
    ``plots=False`` leaves the plots out (and matplotlib unimported); ``plots_note``
    says why in the report.
    """
    plotter = _Plotter() if plots else None
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
        f"{len(report.files)} file(s); fail level {text(report.fail_level)}.</p>",
    ]
    if generated:
        intro.append(f'<p class="muted">Generated {text(generated)}.</p>')
    if title_note:
        intro.append(title_note)
    if toc:
        intro.append(f'<ul class="toc">{toc}</ul>')
    sections = [
        _axis_section(plotter, r, i, report.fail_level_of(r), ripple_fraction) for i, r in enumerate(report.files)
    ]
    foot = (
        '<p class="muted">Written by specguard. Values in SI internally; shown in readable units.</p></body></html>\n'
    )
    return head + "".join(intro) + "".join(sections) + foot
