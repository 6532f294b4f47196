"""Agreement data -> charts as inline SVG text, drawn with matplotlib (Agg/SVG, no pyplot).

Pictures, not proofs: the ranged curves sample a few points (each computed
exactly) and the triangle is drawn in floats; the verdicts beside them come
from `check`. matplotlib is imported here only, so only `report` pays for it.
"""

from __future__ import annotations

import io
import re
from dataclasses import dataclass
from fractions import Fraction

SAMPLES = 25
MAX_CURVE_PARTIES = 10  # every coalition is evaluated exactly at every sample point
STATUS_COLOURS = {"holds": "#2e7d32", "fails": "#c62828", "unknown": "#f9a825"}
RULE_COLOURS = ["#37474f", "#1565c0", "#ef6c00", "#6a1b9a", "#00897b", "#8d6e63"]


@dataclass
class Chart:
    kind: str  # "payouts" | "excess" | "ranged" | "triangle"
    title: str
    svg: str
    caption: str


def _figure(width: float, height: float):
    import matplotlib

    matplotlib.rcParams["svg.fonttype"] = "none"  # text stays text: no embedded glyphs, no font files
    matplotlib.rcParams["svg.hashsalt"] = "pactlang"  # stable ids, so a report is reproducible
    matplotlib.rcParams["font.family"] = "sans-serif"
    matplotlib.rcParams["font.size"] = 9
    from matplotlib.figure import Figure

    return Figure(figsize=(width, height), dpi=100)


def _svg(fig) -> str:
    buf = io.StringIO()
    fig.savefig(buf, format="svg", bbox_inches="tight", metadata={"Date": None})
    text = buf.getvalue()
    text = text[text.index("<svg"):]  # drop the XML prolog and doctype: it sits inside HTML
    return re.sub(r"\s*<metadata>.*?</metadata>", "", text, flags=re.S)  # authoring notes, not picture


def payouts_chart(parties, series: dict[str, list[Fraction]], kind: str, unit: str | None) -> Chart:
    """Grouped bars: what each party pays or receives under each rule."""
    fig = _figure(7.2, 3.2)
    ax = fig.add_subplot()
    n, k = len(parties), len(series)
    width = 0.8 / max(k, 1)
    for j, (name, values) in enumerate(series.items()):
        xs = [i - 0.4 + width * (j + 0.5) for i in range(n)]
        ax.bar(xs, [float(v) for v in values], width, label=name, color=RULE_COLOURS[j % len(RULE_COLOURS)])
    ax.set_xticks(range(n))
    if n > 20:  # many parties: upright labels in a small font, so none overlaps its neighbour
        ax.set_xticklabels(parties, rotation=90, ha="center", fontsize=6)
    else:
        ax.set_xticklabels(parties, rotation=45 if n > 5 else 0, ha="right" if n > 5 else "center")
    ax.axhline(0, color="#555", linewidth=0.6)
    verb = "pays" if kind == "cost" else "receives"
    ax.set_ylabel(f"{verb}{' (' + unit + ')' if unit else ''}")
    ax.legend(fontsize=8, ncol=min(k, 6), frameon=False, loc="lower center", bbox_to_anchor=(0.5, 1.0))
    ax.spines[["top", "right"]].set_visible(False)
    if "alone" in series:
        caption = (f"Bars: what each party {verb} under the agreement and what it would "
                   f"{'pay' if kind == 'cost' else 'earn'} alone (the reference splits need every "
                   f"coalition and are drawn for smaller agreements).")
    else:
        caption = "Bars: the agreement's payout and the reference splits computed by pactlang."
    return Chart("payouts", f"What each party {verb}, by rule", _svg(fig), caption)


def excess_chart(rows: list[tuple[str, float, float | None, str]], unit: str | None) -> Chart:
    """Horizontal bars: the worst excess of each requirement and scenario,
    with its allowed bound marked. `rows`: (label, excess, bound, status)."""
    fig = _figure(7.2, 0.5 + 0.32 * len(rows))
    ax = fig.add_subplot()
    ys = list(range(len(rows)))[::-1]
    ax.barh(ys, [r[1] for r in rows], color=[STATUS_COLOURS.get(r[3], "#999") for r in rows], height=0.6)
    for y, r in zip(ys, rows):
        if r[2] is not None:
            ax.plot([r[2], r[2]], [y - 0.42, y + 0.42], color="#000", linewidth=2)
    ax.set_yticks(ys)
    ax.set_yticklabels([r[0] for r in rows], fontsize=8)
    ax.axvline(0, color="#555", linewidth=0.6)
    ax.set_xlabel(f"worst excess{' (' + unit + ')' if unit else ''}: what the worst coalition gains by leaving")
    ax.spines[["top", "right"]].set_visible(False)
    return Chart("excess", "Worst excess against the allowed bound", _svg(fig),
                 "Bars: the worst coalition's excess (green holds, red fails); black tick: the allowed bound.")


def ranged_chart(title: str, key: str, xs: list[float], ys: list[float], bound: float | None,
                 unit: str | None, worst_at: float | None) -> Chart:
    """The worst excess against one ranged quantity, sampled."""
    fig = _figure(6.0, 2.8)
    ax = fig.add_subplot()
    ax.plot(xs, ys, marker="o", markersize=3, color="#1565c0", label="worst excess (sampled)")
    if bound is not None:
        ax.axhline(bound, color="#c62828", linestyle="--", label="allowed bound")
    if worst_at is not None:
        ax.axvline(worst_at, color="#555", linestyle=":", label="worst case found by check")
    ax.set_xlabel(key)
    ax.set_ylabel(f"worst excess{' (' + unit + ')' if unit else ''}")
    ax.legend(fontsize=8, frameon=False)
    ax.spines[["top", "right"]].set_visible(False)
    return Chart("ranged", title, _svg(fig),
                 f"A picture from {len(xs)} sample points, each computed exactly; the verdict comes from the proof, not from this curve.")


def _clip(polygon, a, b, c):
    """Keep the part of a polygon where a*x + b*y >= c (Sutherland-Hodgman)."""
    out = []
    for i, p in enumerate(polygon):
        q = polygon[(i + 1) % len(polygon)]
        fp, fq = a * p[0] + b * p[1] - c, a * q[0] + b * q[1] - c
        if fp >= 0:
            out.append(p)
        if (fp >= 0) != (fq >= 0):
            t = fp / (fp - fq)
            out.append((p[0] + t * (q[0] - p[0]), p[1] + t * (q[1] - p[1])))
    return out


def triangle_chart(parties, value_worth, total: float, lower: list[float], allowed,
                   points: dict[str, list[float]], title: str, kind: str = "value") -> Chart:
    """The triangle of splits of `total` among three parties (value form:
    what each receives), the set meeting the requirement shaded and each
    split as a point. `value_worth(mask)` gives v(S); `allowed(mask)` the
    excess a coalition may keep (0 for the core)."""
    import math

    spread = total - sum(lower)
    corners = [(0.0, 0.0), (1.0, 0.0), (0.5, math.sqrt(3) / 2)]

    def to_xy(x):
        w = [(x[i] - lower[i]) / spread for i in range(3)]
        return (sum(w[i] * corners[i][0] for i in range(3)), sum(w[i] * corners[i][1] for i in range(3)))

    # (x0, x1) coordinates; x2 = total - x0 - x1. Start from the whole triangle.
    poly = [(total - lower[1] - lower[2], lower[1]), (lower[0], total - lower[0] - lower[2]), (lower[0], lower[1])]
    for mask in range(1, 7):
        need = value_worth(mask) - allowed(mask)
        a = (1 if mask & 1 else 0) - (1 if mask & 4 else 0)
        b = (1 if mask & 2 else 0) - (1 if mask & 4 else 0)
        c = need - (total if mask & 4 else 0)
        poly = _clip(poly, a, b, c)
        if not poly:
            break
    fig = _figure(5.2, 4.6)
    ax = fig.add_subplot()
    ax.fill([p[0] for p in corners], [p[1] for p in corners], color="#eceff1", edgecolor="#607d8b")
    if poly:
        shape = [to_xy((p[0], p[1], total - p[0] - p[1])) for p in poly]
        ax.fill([p[0] for p in shape], [p[1] for p in shape], color="#a5d6a7", edgecolor="#2e7d32",
                label="splits meeting the requirement")
    for j, (name, x) in enumerate(points.items()):
        px, py = to_xy(x)
        ax.plot([px], [py], marker="o" if j == 0 else "s", markersize=8 if j == 0 else 6,
                color=RULE_COLOURS[j % len(RULE_COLOURS)], linestyle="none", label=name)
    for (cx, cy), name, dy in zip(corners, parties, (-0.07, -0.07, 0.04)):
        ax.annotate(f"{name} pays least" if kind == "cost" else f"most to {name}", (cx, cy + dy),
                    ha="center", fontsize=8)
    ax.set_xlim(-0.15, 1.15)
    ax.set_ylim(-0.12, 1.0)
    ax.set_aspect("equal")
    ax.axis("off")
    ax.legend(fontsize=8, frameon=False, loc="upper left", bbox_to_anchor=(0.92, 1.0))
    caption = ("Each point of the triangle is one way to share the total; shaded: the splits no coalition can "
               "beat by more than the requirement allows. " + ("None exists at this bound." if not poly else ""))
    return Chart("triangle", title, _svg(fig), caption.strip())
