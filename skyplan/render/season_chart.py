"""Season charts (matplotlib, Agg, PNG bytes): drawing only.

* :func:`heatmap_png` — usable hours of every target (rows, sorted by their best night)
  by night (columns), one colour scale, months marked on the time axis.
* :func:`track_png` — the usable hours of one or a few targets night by night, over a
  band showing the Moon's illuminated fraction (0 new, 1 full).
"""

from __future__ import annotations

import io

import numpy as np

from skyplan.render.chartstyle import chart_style, new_figure

DPI = 100
MAX_ROWS = 60  # targets drawn in the heat map (the best-placed first)


def _png(fig) -> bytes:
    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", dpi=DPI, metadata={"Software": None})
    return buffer.getvalue()


def _month_ticks(ax, dates) -> None:
    # the range's first night is marked too, unless a month begins less than 20 nights later
    # (the two labels would run into each other)
    firsts = [k for k, d in enumerate(dates) if d.day == 1 or (k == 0 and d.day <= 10)]
    ax.set_xticks(firsts)
    ax.set_xticklabels([dates[k].strftime("%b\n%Y" if dates[k].month == 1 or k == firsts[0]
                                          else "%b") for k in firsts])


def heatmap_png(season) -> bytes:
    """Usable hours by target and night, targets sorted by their best night."""
    s = season.summary()
    key = np.where(s.best >= 0, s.best, len(season.dates))
    order = np.lexsort((-s.usable_hours, key))[:MAX_ROWS]
    hours = season.usable_min[order].astype(float) / 60.0
    names = [str(season.names[i]) for i in order]
    with chart_style():
        fig, _ = new_figure(1100, max(360, 120 + 16 * len(order)), DPI)
        ax = fig.add_axes((0.2, 0.14, 0.68, 0.76))
        image = ax.imshow(hours, aspect="auto", interpolation="nearest", cmap="viridis",
                          vmin=0.0, vmax=max(1.0, float(np.nanmax(hours, initial=0.0))))
        ax.set_yticks(range(len(names)))
        ax.set_yticklabels(names, fontsize=8)
        _month_ticks(ax, season.dates)
        ax.set_xlabel("night (local date of the evening)")
        more = len(season.names) - len(order)
        ax.set_title(f"Usable hours per night at {season.site.name}"
                     + (f" ({len(order)} of {len(season.names)} targets)" if more else ""),
                     loc="left")
        bar = fig.add_axes((0.9, 0.14, 0.02, 0.76))
        fig.colorbar(image, cax=bar).set_label("usable hours")
        return _png(fig)


def track_png(season, names: list[str]) -> bytes:
    """Usable hours of ``names`` through the range, with the Moon's illumination below."""
    days = np.arange(len(season.dates))
    with chart_style():
        fig, _ = new_figure(1100, 520, DPI)
        ax = fig.add_axes((0.08, 0.32, 0.74, 0.6))
        moon = fig.add_axes((0.08, 0.1, 0.74, 0.14), sharex=ax)
        for name in names:
            row = int(np.flatnonzero(season.names == name)[0])
            ax.plot(days, season.usable_min[row] / 60.0, lw=1.6, label=name)
        ax.axhline(season.min_minutes / 60.0, color="0.5", lw=0.8, ls="--",
                   label=f"{season.min_minutes:g} min")
        ax.set_ylabel("usable hours")
        ax.set_ylim(bottom=0)
        ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize=8, frameon=False)
        ax.set_title(f"Usable hours night by night at {season.site.name}", loc="left")
        ax.tick_params(labelbottom=False)
        ax.grid(alpha=0.3)
        k = np.asarray(season.moon_illumination, float)
        moon.fill_between(days, k, color="0.7", step="mid", lw=0)
        moon.set_ylim(0, 1)
        moon.set_yticks([0, 1])
        moon.set_ylabel("Moon lit", fontsize=8)
        _month_ticks(moon, season.dates)
        return _png(fig)
