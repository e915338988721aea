"""The SVG plotter's axes (:mod:`workbench.plots.vector`): :class:`Axes`, a plotting area at a pixel box.

Series are kept in data coordinates (lines, markers, bars, polygons,
arrows, annotations) and turned into pixels when the figure is written:
limits from the data widened to nice ticks (or set, or shared), data →
pixel transforms, ticks, grid, frame, legend (inside at the emptiest
corner, right of or below the axes) and colour bar. The text, number and
SVG pieces come from :mod:`workbench.plots.vector_style`.
"""

from __future__ import annotations

import math

import numpy as np

from workbench.plots.vector_style import (AXIS_COLOUR, FAR_PX, GRID_COLOUR, PALETTE, TEXT_COLOUR, VIRIDIS, arrow_path,
                                          marker_path, nice_limits, nice_ticks, path_svg, point_texts,
                                          px_text, style_attrs, text_svg, text_width, tick_labels)

__all__ = ["Axes"]


# --------------------------------------------------------------------------
# Axes
# --------------------------------------------------------------------------


class Axes:
    """A plotting area at a pixel box; series are kept in data coordinates until the figure is written.

    Parameters
    ----------
    box : (left, top, width, height), px
    xlim, ylim : (lo, hi), optional
        Fixed limits; else the data's range widened by ``margin`` (a
        fraction of the range) and, with ``nice``, to the next ticks.
    share_x : Axes, optional
        Use that axes' x limits and ticks (a panel below another).
    equal : bool
        One data unit the same number of pixels on both axes (the box's
        larger side shrinks, centred).
    """

    def __init__(self, box, *, xlim=None, ylim=None, margin=(0.0, 0.05), nice=(True, True),
                 share_x: "Axes | None" = None, equal: bool = False, xticks: int = 7, yticks: int = 6):
        self.box = tuple(float(v) for v in box)
        self._xlim, self._ylim = xlim, ylim
        self.margin = margin
        self.nice = nice
        self.share_x = share_x
        self.equal = equal
        self.tick_count = (xticks, yticks)
        self.items: list[tuple] = []
        self.legend_entries: list[tuple] = []
        self.legend_spec: dict | None = None
        self.texts: list[tuple] = []
        self.xlabel = self.ylabel = self.title = ""
        self.title_loc = "left"
        self.grid_axes = "xy"
        self.custom_xticks: tuple | None = None
        self.tick_labels_x = True
        self.tick_labels_y = True  # False: no y ticks nor their labels (rows named by annotations instead)
        self.colorbar_spec: dict | None = None
        self.limits: tuple | None = None  # ((x0, x1), (y0, y1)) once resolved

    # ---- series ------------------------------------------------------------

    def _entry(self, label, kind, style):
        if label:
            self.legend_entries.append((str(label), kind, style))

    def line(self, x, y, *, colour: str = PALETTE[0], width: float = 1.5, dash: str | None = None,
             opacity: float = 1.0, label: str | None = None) -> "Axes":
        """A polyline through (x, y); non-finite points break it.

        ``dash``: 'dashed', 'dotted', 'dashdot' or an SVG dash array ('4 2').
        """
        x, y = np.broadcast_arrays(np.asarray(x, dtype=float).ravel(), np.asarray(y, dtype=float).ravel())
        self.items.append(("line", x, y, {"colour": colour, "width": width, "dash": dash, "opacity": opacity}))
        self._entry(label, "line", {"colour": colour, "width": width, "dash": dash, "opacity": opacity})
        return self

    def markers(self, x, y, *, shape: str = "circle", size: float = 7.0, fill: str | None = PALETTE[0],
                edge: str | None = None, edge_width: float = 1.2, opacity: float = 1.0,
                label: str | None = None) -> "Axes":
        """Markers (circle, square, triangle, triangle-down, diamond, star) ``size`` px across at (x, y)."""
        marker_path(shape, 0, 0, 1)  # checks the shape
        x, y = np.broadcast_arrays(np.asarray(x, dtype=float).ravel(), np.asarray(y, dtype=float).ravel())
        st = {"shape": shape, "size": size, "fill": fill, "edge": edge, "edge_width": edge_width, "opacity": opacity}
        self.items.append(("markers", x, y, st))
        self._entry(label, "marker", st)
        return self

    def bars(self, x, heights, *, width: float = 0.8, colours, base: float = 0.0) -> "Axes":
        """Bars ``width`` data units wide from ``base`` to ``heights``; ``colours`` one or one per bar."""
        x = np.asarray(x, dtype=float).ravel()
        h = np.asarray(heights, dtype=float).ravel()
        cols = [colours] * x.size if isinstance(colours, str) else list(colours)
        self.items.append(("bars", x, h, {"width": width, "colours": cols, "base": base}))
        return self

    def fill_between(self, x, y0, y1, *, colour: str = PALETTE[0], opacity: float = 0.2,
                     label: str | None = None) -> "Axes":
        """The region between y0 and y1 over x, filled (non-finite points left out)."""
        x, y0, y1 = np.broadcast_arrays(np.asarray(x, dtype=float).ravel(), np.asarray(y0, dtype=float).ravel(),
                                        np.asarray(y1, dtype=float).ravel())
        ok = np.isfinite(x) & np.isfinite(y0) & np.isfinite(y1)
        xs = np.concatenate([x[ok], x[ok][::-1]])
        ys = np.concatenate([y1[ok], y0[ok][::-1]])
        return self.polygon(xs, ys, fill=colour, opacity=opacity, label=label)

    def polygon(self, x, y, *, fill: str | None = None, edge: str | None = None, width: float = 1.0,
                opacity: float = 1.0, dash: str | None = None, label: str | None = None) -> "Axes":
        """A closed polygon through (x, y), filled and/or outlined."""
        x, y = np.broadcast_arrays(np.asarray(x, dtype=float).ravel(), np.asarray(y, dtype=float).ravel())
        st = {"fill": fill, "edge": edge, "width": width, "opacity": opacity, "dash": dash}
        self.items.append(("polygon", x, y, st))
        self._entry(label, "patch", st)
        return self

    def hline(self, y: float, *, colour: str = AXIS_COLOUR, width: float = 1.0, dash: str | None = None,
              opacity: float = 1.0, label: str | None = None) -> "Axes":
        """A horizontal line across the axes at ``y`` (its value counts for the limits)."""
        self.items.append(("hline", None, np.array([float(y)]),
                           {"colour": colour, "width": width, "dash": dash, "opacity": opacity}))
        self._entry(label, "line", {"colour": colour, "width": width, "dash": dash, "opacity": opacity})
        return self

    def vline(self, x: float, *, colour: str = AXIS_COLOUR, width: float = 1.0, dash: str | None = None,
              opacity: float = 1.0, label: str | None = None) -> "Axes":
        """A vertical line across the axes at ``x``."""
        self.items.append(("vline", np.array([float(x)]), None,
                           {"colour": colour, "width": width, "dash": dash, "opacity": opacity}))
        self._entry(label, "line", {"colour": colour, "width": width, "dash": dash, "opacity": opacity})
        return self

    def arrows(self, x, y, dx, dy, *, colours, width: float = 1.2, head: float = 7.0, shrink: float = 0.0,
               label: str | None = None, legend_colour: str | None = None) -> "Axes":
        """Arrows from (x, y) by (dx, dy) in data units, both ends pulled in by ``shrink`` px (to clear markers);
        ``colours`` one or one per arrow (one path per colour)."""
        x, y, dx, dy = (np.asarray(v, dtype=float).ravel() for v in (x, y, dx, dy))
        cols = [colours] * x.size if isinstance(colours, str) else list(colours)
        self.items.append(("arrows", np.concatenate([x, x + dx]), np.concatenate([y, y + dy]),
                           {"colours": cols, "width": width, "head": head, "n": x.size, "shrink": shrink}))
        self._entry(label, "arrow", {"colour": legend_colour or (cols[0] if cols else PALETTE[0])})
        return self

    def annotate(self, text, x: float, y: float, *, dx: float = 0.0, dy: float = 0.0, size: float = 10.0,
                 anchor: str = "start", va: str = "baseline", colour: str = TEXT_COLOUR, halo: bool = True) -> "Axes":
        """``text`` at data point (x, y) moved by (dx, dy) px (dy up); skipped when the point is not finite."""
        self.texts.append((float(x), float(y), str(text), dx, dy, size, anchor, va, colour, halo))
        return self

    # ---- decoration --------------------------------------------------------

    def set(self, *, xlabel: str | None = None, ylabel: str | None = None, title: str | None = None,
            title_loc: str | None = None, grid: str | None = None) -> "Axes":
        """Axis labels (quantity and unit), the title (``title_loc`` 'left' or 'center'), grid 'xy', 'x', 'y' or ''."""
        if xlabel is not None:
            self.xlabel = xlabel
        if ylabel is not None:
            self.ylabel = ylabel
        if title is not None:
            self.title = title
        if title_loc is not None:
            self.title_loc = title_loc
        if grid is not None:
            self.grid_axes = grid
        return self

    def xticks(self, positions, labels) -> "Axes":
        """Fixed x ticks at ``positions`` with ``labels`` (instead of numbers)."""
        self.custom_xticks = (np.asarray(positions, dtype=float), [str(s) for s in labels])
        return self

    def legend(self, loc: str = "best", *, ncol: int = 1, size: float = 10.5, title: str | None = None) -> "Axes":
        """A legend of every labelled series: 'best' (the inside corner covering the fewest data points),
        'upper right', 'upper left', 'lower right', 'lower left', 'right' (outside, right of the axes) or
        'below' (outside, under the tick labels)."""
        if loc not in _LEGEND_LOCS:
            raise ValueError(f"legend loc must be one of {', '.join(_LEGEND_LOCS)} (got {loc!r})")
        self.legend_spec = {"loc": loc, "ncol": max(1, int(ncol)), "size": size, "title": title}
        return self

    def colorbar(self, lo: float, hi: float, *, label: str, width: float = 14.0, gap: float = 14.0) -> "Axes":
        """A colour bar of :func:`colour_map` over ``[lo, hi]`` right of the axes, ticks and ``label`` beside it."""
        self.colorbar_spec = {"lo": float(lo), "hi": float(hi), "label": label, "width": width, "gap": gap}
        return self

    # ---- limits and transforms ----------------------------------------------

    def _extent(self, which: int) -> tuple[float, float]:
        vals = []
        for kind, x, y, st in self.items:
            v = x if which == 0 else y
            if v is None:
                continue
            if kind == "bars":
                v = (np.concatenate([x - st["width"] / 2, x + st["width"] / 2]) if which == 0
                     else np.concatenate([y, [st["base"]]]))
            vals.append(v[np.isfinite(v)])
        allv = np.concatenate(vals) if vals else np.array([])
        if allv.size == 0:
            return math.nan, math.nan
        return float(allv.min()), float(allv.max())

    def _resolve(self) -> None:
        lims = []
        for which, fixed in ((0, self._xlim), (1, self._ylim)):
            if which == 0 and self.share_x is not None:
                if self.share_x.limits is None:
                    self.share_x._resolve()
                lims.append(self.share_x.limits[0])
                continue
            if fixed is not None:
                lims.append((float(fixed[0]), float(fixed[1])))
                continue
            lo, hi = self._extent(which)
            if not (math.isfinite(lo) and math.isfinite(hi)):
                lo, hi = 0.0, 1.0
            pad = self.margin[which] * (hi - lo)
            lo, hi = lo - pad, hi + pad
            if self.nice[which]:
                lo, hi = nice_limits(lo, hi, self.tick_count[which])
            elif hi <= lo:
                lo, hi = nice_limits(lo, hi)
            lims.append((lo, hi))
        (x0, x1), (y0, y1) = lims
        if self.equal:
            left, top, w, h = self.box
            per = min(w / (x1 - x0), h / (y1 - y0))
            nw, nh = per * (x1 - x0), per * (y1 - y0)
            self.box = (left + (w - nw) / 2, top + (h - nh) / 2, nw, nh)
        self.limits = ((x0, x1), (y0, y1))

    def px(self, x) -> np.ndarray:
        """Data x → pixel x (after the limits are resolved)."""
        (x0, x1), _ = self.limits
        left, _, w, _ = self.box
        return left + (np.asarray(x, dtype=float) - x0) / (x1 - x0) * w

    def py(self, y) -> np.ndarray:
        """Data y → pixel y (downwards, as SVG)."""
        _, (y0, y1) = self.limits
        _, top, _, h = self.box
        return top + h - (np.asarray(y, dtype=float) - y0) / (y1 - y0) * h

    def ticks(self, which: int) -> tuple[np.ndarray, list[str]]:
        """Tick positions and labels of x (0) or y (1)."""
        if which == 0 and self.share_x is not None:
            return self.share_x.ticks(0)
        if which == 0 and self.custom_xticks is not None:
            return self.custom_xticks
        lo, hi = self.limits[which]
        length = self.box[2] if which == 0 else self.box[3]
        count = min(self.tick_count[which], max(2.0, length / (70.0 if which == 0 else 40.0)))
        t = nice_ticks(lo, hi, count)
        while t.size < 2 and count < 50:  # at least two ticks, so the scale can be read
            count *= 1.5
            t = nice_ticks(lo, hi, count)
        labels = tick_labels(t)
        while which == 0 and t.size > 2:  # x labels wider than their spacing: fewer ticks, never under two
            spacing = length * (t[1] - t[0]) / (hi - lo)
            if max(text_width(s, 11) for s in labels) + 10 <= spacing:
                break
            count *= 0.8
            fewer = nice_ticks(lo, hi, count)
            if fewer.size < 2:
                break
            if fewer.size < t.size:
                t, labels = fewer, tick_labels(fewer)
        if which == 0 and t.size > 1:  # still too close: label every k-th tick only
            spacing = length * (t[1] - t[0]) / (hi - lo)
            k = math.ceil((max(text_width(s, 11) for s in labels) + 10) / max(spacing, 1e-9))
            if k > 1:
                labels = [s if i % k == 0 else "" for i, s in enumerate(labels)]
        return t, labels

    # ---- drawing ---------------------------------------------------------------

    def _svg(self, clip_id: str) -> list[str]:
        left, top, w, h = self.box
        right, bottom = left + w, top + h
        out = [f'<rect x="{px_text(left)}" y="{px_text(top)}" width="{px_text(w)}" height="{px_text(h)}" fill="#ffffff"/>']
        xt, xl = self.ticks(0)
        yt, yl = self.ticks(1)
        if not self.tick_labels_y:
            yt, yl = yt[:0], []
        grid = []
        if "x" in self.grid_axes and self.custom_xticks is None:
            grid += [f"M{px_text(p)},{px_text(top)}V{px_text(bottom)}" for p in self.px(xt).tolist()]
        if "y" in self.grid_axes:
            grid += [f"M{px_text(left)},{px_text(p)}H{px_text(right)}" for p in self.py(yt).tolist()]
        if grid:
            out.append(f'<path d="{"".join(grid)}" {style_attrs(stroke=GRID_COLOUR, width=0.8)}/>')
        out.append(f'<g clip-path="url(#{clip_id})">')
        for item in self.items:
            out.extend(self._item_svg(*item))
        out.append("</g>")
        # frame, ticks, tick labels
        out.append(f'<path d="M{px_text(left)},{px_text(top)}H{px_text(right)}V{px_text(bottom)}H{px_text(left)}z" '
                   f'{style_attrs(stroke=AXIS_COLOUR, width=0.9)}/>')
        tk = [f"M{px_text(p)},{px_text(bottom)}v4" for p in self.px(xt).tolist()]
        tk += [f"M{px_text(left)},{px_text(p)}h-4" for p in self.py(yt).tolist()]
        if tk:
            out.append(f'<path d="{"".join(tk)}" {style_attrs(stroke=AXIS_COLOUR, width=0.9)}/>')
        if self.tick_labels_x:
            for p, s in zip(self.px(xt).tolist(), xl):
                if s:
                    out.append(text_svg(p, bottom + 7, s, size=11, anchor="middle", va="top", colour=AXIS_COLOUR))
        for p, s in zip(self.py(yt).tolist(), yl):
            out.append(text_svg(left - 7, p, s, size=11, anchor="end", va="middle", colour=AXIS_COLOUR))
        if self.xlabel:
            nlines = max((s.count("\n") + 1 for s in xl), default=1) if self.tick_labels_x else 0
            out.append(text_svg(left + w / 2, bottom + 12 + 13.5 * nlines, self.xlabel, size=12.5,
                                 anchor="middle", va="top"))
        if self.ylabel:
            width = max((text_width(s, 11) for s in yl), default=0.0)
            x = left - 14 - width
            nl = self.ylabel.count("\n")
            out.append(text_svg(x - nl * 15, top + h / 2, self.ylabel, size=12.5, anchor="middle",
                                 va="bottom", rotate=-90))
        if self.title:
            if self.title_loc == "center":
                out.append(text_svg(left + w / 2, top - 8, self.title, size=12.5, anchor="middle", va="bottom",
                                     weight="600"))
            else:
                out.append(text_svg(left, top - 8, self.title, size=12.5, va="bottom", weight="600"))
        for x, y, s, dx, dy, size, anchor, va, colour, halo in self.texts:
            if math.isfinite(x) and math.isfinite(y):
                out.append(text_svg(float(self.px(x)) + dx, float(self.py(y)) - dy, s, size=size, anchor=anchor,
                                     va=va, colour=colour, halo=halo))
        if self.colorbar_spec:
            out.extend(self._colorbar_svg(clip_id))
        if self.legend_spec and self.legend_entries:
            out.extend(self._legend_svg())
        return out

    def _item_svg(self, kind, x, y, st) -> list[str]:
        left, top, w, h = self.box
        if kind == "line":
            px, py = self.px(x), self.py(y)
            ok = np.isfinite(px) & np.isfinite(py)
            d = []
            for run in np.split(np.arange(px.size), np.flatnonzero(np.diff(ok.astype(int)) != 0) + 1):
                if run.size and ok[run[0]]:
                    pts = point_texts(px[run], py[run])
                    d.append("M" + pts[0] + ("L" + " ".join(pts[1:]) if len(pts) > 1 else ""))
            if not d:
                return []
            return [path_svg("".join(d), stroke=st["colour"], width=st["width"], dash=st["dash"], opacity=st["opacity"],
                          join="round", cap=None if st["dash"] else "round")]
        if kind in ("hline", "vline"):
            if kind == "hline":
                p = float(self.py(y[0]))
                d = f"M{px_text(left)},{px_text(p)}H{px_text(left + w)}"
            else:
                p = float(self.px(x[0]))
                d = f"M{px_text(p)},{px_text(top)}V{px_text(top + h)}"
            if not math.isfinite(p):
                return []
            return [path_svg(d, stroke=st["colour"], width=st["width"], dash=st["dash"], opacity=st["opacity"])]
        if kind == "markers":
            px, py = self.px(x), self.py(y)
            ok = np.isfinite(px) & np.isfinite(py)
            r = st["size"] / 2
            d = "".join(marker_path(st["shape"], a, b, r) for a, b in zip(
                np.clip(px[ok], -FAR_PX, FAR_PX).tolist(), np.clip(py[ok], -FAR_PX, FAR_PX).tolist()))
            if not d:
                return []
            return [path_svg(d, fill=st["fill"] or "none", stroke=st["edge"], width=st["edge_width"],
                          opacity=st["opacity"])]
        if kind == "bars":
            x0, x1 = self.px(x - st["width"] / 2), self.px(x + st["width"] / 2)
            yb, yt = self.py(np.full_like(y, st["base"])), self.py(y)
            by_colour: dict[str, list[str]] = {}
            for i in range(x.size):
                vals = (x0[i], x1[i], yb[i], yt[i])
                if not all(math.isfinite(v) for v in vals):
                    continue
                lo, hi = sorted((float(np.clip(yb[i], -FAR_PX, FAR_PX)), float(np.clip(yt[i], -FAR_PX, FAR_PX))))
                by_colour.setdefault(st["colours"][i], []).append(
                    f"M{px_text(x0[i])},{px_text(lo)}H{px_text(x1[i])}V{px_text(hi)}H{px_text(x0[i])}z")
            return [f'<path d="{"".join(d)}" fill="{c}"/>' for c, d in by_colour.items()]
        if kind == "polygon":
            px, py = self.px(x), self.py(y)
            ok = np.isfinite(px) & np.isfinite(py)
            pts = point_texts(px[ok], py[ok])
            if len(pts) < 2:
                return []
            d = "M" + pts[0] + "L" + " ".join(pts[1:]) + "z"
            return [path_svg(d, fill=st["fill"] or "none", stroke=st["edge"], width=st["width"], opacity=st["opacity"],
                          dash=st["dash"], join="round")]
        if kind == "arrows":
            n = st["n"]
            px, py = self.px(x), self.py(y)
            shafts: dict[str, list[str]] = {}
            heads: dict[str, list[str]] = {}
            for i in range(n):
                pts = (px[i], py[i], px[n + i], py[n + i])
                if not all(math.isfinite(v) for v in pts):
                    continue
                x0, y0, x1, y1 = (float(np.clip(v, -FAR_PX, FAR_PX)) for v in pts)
                length = math.hypot(x1 - x0, y1 - y0)
                if st["shrink"] and length > 2 * st["shrink"] + 4:
                    ux, uy = (x1 - x0) / length * st["shrink"], (y1 - y0) / length * st["shrink"]
                    x0, y0, x1, y1 = x0 + ux, y0 + uy, x1 - ux, y1 - uy
                s, t = arrow_path(x0, y0, x1, y1, st["head"])
                if s:
                    shafts.setdefault(st["colours"][i], []).append(s)
                    heads.setdefault(st["colours"][i], []).append(t)
            out = []
            for c in shafts:
                out.append(f'<path d="{"".join(shafts[c])}" {style_attrs(stroke=c, width=st["width"], cap="round")}/>')
                out.append(f'<path d="{"".join(heads[c])}" fill="{c}"/>')
            return out
        raise AssertionError(kind)

    def _colorbar_svg(self, clip_id: str) -> list[str]:
        cb = self.colorbar_spec
        left, top, w, h = self.box
        x = left + w + cb["gap"]
        gid = clip_id + "g"
        stops = "".join(f'<stop offset="{k / (len(VIRIDIS) - 1):.2f}" stop-color="{c}"/>'
                        for k, c in enumerate(VIRIDIS))
        out = [f'<defs><linearGradient id="{gid}" x1="0" y1="1" x2="0" y2="0">{stops}</linearGradient></defs>',
               f'<rect x="{px_text(x)}" y="{px_text(top)}" width="{px_text(cb["width"])}" height="{px_text(h)}" '
               f'{style_attrs(fill=f"url(#{gid})", stroke=AXIS_COLOUR, width=0.6)}/>']
        lo, hi = cb["lo"], cb["hi"]
        if not (math.isfinite(lo) and math.isfinite(hi)) or hi <= lo:
            lo, hi = (lo, lo + 1.0) if math.isfinite(lo) else (0.0, 1.0)
        t = nice_ticks(lo, hi, max(2.0, h / 45))
        labels = tick_labels(t)
        tick_d = []
        widest = 0.0
        for v, s in zip(t.tolist(), labels):
            p = top + h - (v - lo) / (hi - lo) * h
            tick_d.append(f"M{px_text(x + cb['width'])},{px_text(p)}h3")
            out.append(text_svg(x + cb["width"] + 6, p, s, size=11, va="middle", colour=AXIS_COLOUR))
            widest = max(widest, text_width(s, 11))
        if tick_d:
            out.append(f'<path d="{"".join(tick_d)}" {style_attrs(stroke=AXIS_COLOUR, width=0.8)}/>')
        lx = x + cb["width"] + 12 + widest + 4
        out.append(text_svg(lx, top + h / 2, cb["label"], size=12, anchor="middle", va="top", rotate=-90))
        return out

    def _legend_svg(self) -> list[str]:
        spec = self.legend_spec
        size = spec["size"]
        ncol = min(spec["ncol"], len(self.legend_entries))
        rows = math.ceil(len(self.legend_entries) / ncol)
        sample, pad, row_h = 26.0, 7.0, size * 1.5
        col_w = []
        for c in range(ncol):
            texts = [e[0] for e in self.legend_entries[c * rows:(c + 1) * rows]]
            col_w.append(sample + 6 + max(text_width(t, size) for t in texts) if texts else 0.0)
        title_h = row_h if spec["title"] else 0.0
        bw = sum(col_w) + 12 * (ncol - 1) + 2 * pad
        if spec["title"]:
            bw = max(bw, text_width(spec["title"], size) + 2 * pad)
        bh = rows * row_h + title_h + 2 * pad - (row_h - size * 1.2)
        left, top, w, h = self.box
        loc = spec["loc"]
        if loc == "best":
            loc = self._best_corner(bw, bh)
        if loc == "right":
            extra = (self.colorbar_spec["gap"] + 60) if self.colorbar_spec else 0.0
            bx, by, frame = left + w + 12 + extra, top, False
        elif loc == "below":
            nl = max((s.count("\n") + 1 for s in self.ticks(0)[1]), default=1)
            bx, by, frame = left + (w - bw) / 2, top + h + 14 + 13.5 * nl + (18 if self.xlabel else 0), False
        else:
            bx = left + w - bw - 6 if "right" in loc else left + 6
            by = top + 6 if "upper" in loc else top + h - bh - 6
            frame = True
        out = ["<g>"]
        if frame:
            out.append(f'<rect x="{px_text(bx)}" y="{px_text(by)}" width="{px_text(bw)}" height="{px_text(bh)}" rx="3" fill="#ffffff" '
                       f'fill-opacity="0.9" stroke="#cccccc" stroke-width="0.8"/>')
        y = by + pad
        if spec["title"]:
            out.append(text_svg(bx + pad, y + row_h / 2, spec["title"], size=size, va="middle", weight="600"))
            y += row_h
        cx = bx + pad
        for c in range(ncol):
            for r, (text, kind, st) in enumerate(self.legend_entries[c * rows:(c + 1) * rows]):
                cy = y + r * row_h + size * 0.6
                out.append(self._legend_sample(kind, st, cx, cy, sample))
                out.append(text_svg(cx + sample + 6, cy, text, size=size, va="middle"))
            cx += col_w[c] + 12
        out.append("</g>")
        return out

    @staticmethod
    def _legend_sample(kind, st, x, y, length) -> str:
        if kind == "line":
            return (f'<path d="M{px_text(x)},{px_text(y)}h{px_text(length)}" '
                    f'{style_attrs(stroke=st["colour"], width=st["width"], dash=st["dash"], opacity=st["opacity"])}/>')
        if kind == "marker":
            return path_svg(marker_path(st["shape"], x + length / 2, y, st["size"] / 2), fill=st["fill"] or "none",
                         stroke=st["edge"], width=st["edge_width"], opacity=st["opacity"])
        if kind == "arrow":
            s, t = arrow_path(x + 2, y, x + length - 1, y, 7.0)
            return (f'<path d="{s}" {style_attrs(stroke=st["colour"], width=1.4)}/>'
                    f'<path d="{t}" fill="{st["colour"]}"/>')
        style = style_attrs(fill=st["fill"] or "none", stroke=st["edge"], width=st["width"], opacity=st["opacity"])
        return f'<rect x="{px_text(x + 4)}" y="{px_text(y - 5)}" width="{px_text(length - 8)}" height="10" {style}/>'

    def _best_corner(self, bw: float, bh: float) -> str:
        """The inside corner whose legend box covers the fewest drawn points (and bar tops)."""
        xs, ys = [], []
        for kind, x, y, st in self.items:
            if kind in ("hline", "vline"):
                continue
            if kind == "bars":
                xs.append(self.px(x))
                ys.append(self.py(y))
                continue
            px, py = self.px(x), self.py(y)
            if kind in ("line", "polygon") and px.size > 1:  # points along each segment too
                t = np.linspace(0, 1, 6)[:, None]
                px = (px[:-1] * (1 - t) + px[1:] * t).ravel()
                py = (py[:-1] * (1 - t) + py[1:] * t).ravel()
            xs.append(px)
            ys.append(py)
        for x, y, *_ in self.texts:
            xs.append(self.px(np.array([x])))
            ys.append(self.py(np.array([y])))
        px = np.concatenate(xs) if xs else np.array([])
        py = np.concatenate(ys) if ys else np.array([])
        left, top, w, h = self.box
        best, score = "upper right", math.inf
        for loc in ("upper right", "upper left", "lower right", "lower left"):
            bx = left + w - bw - 6 if "right" in loc else left + 6
            by = top + 6 if "upper" in loc else top + h - bh - 6
            inside = (px >= bx - 4) & (px <= bx + bw + 4) & (py >= by - 4) & (py <= by + bh + 4)
            n = int(np.count_nonzero(inside))
            if n < score:
                best, score = loc, n
        return best


_LEGEND_LOCS = ("best", "upper right", "upper left", "lower right", "lower left", "right", "below")
