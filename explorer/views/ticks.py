"""Log-pressure axes that stay readable over thirty decades.

Helium's isotherms run from ~1e-30 Pa to p₀; Bokeh's own `LogTicker` labels up to ten decades' worth of
ticks whatever the axis's length (it takes every ⌈span/9⌉-th decade), and ten labels such as 10⁻²⁶ do not fit
side by side under a 300 px plot. `decade_ticker` labels every k-th decade, k the first of 1, 2, 3, 5, 10, 20,
50, 100 that leaves at most ``max_labels`` labels in the range on show (so a zoom brings the decades back), with
a minor tick at every decade between; below two decades on show it labels 1, 2 and 5 times each power of ten.
The labels stay Bokeh's compact powers of ten (`LogTickFormatter`).
"""
from __future__ import annotations

from bokeh.models import CustomJSTicker, LogAxis

__all__ = ["MAX_LABELS", "decade_ticker", "readable_log_axes"]

MAX_LABELS = 6         # labels on a ~300 px axis: a 10⁻²⁶ label is ~40 px wide, with room between them

_MAJOR = """
const lo = Math.log10(Math.min(cb_data.start, cb_data.end));
const hi = Math.log10(Math.max(cb_data.start, cb_data.end));
if (!isFinite(lo) || !isFinite(hi) || hi <= lo) return [];
if (hi - lo < 2) {
  const ticks = [];
  for (let e = Math.floor(lo); e <= Math.ceil(hi); e++)
    for (const m of [1, 2, 5]) {
      const v = m * 10 ** e;
      if (Math.log10(v) >= lo && Math.log10(v) <= hi) ticks.push(v);
    }
  return ticks;
}
for (const step of [1, 2, 3, 5, 10, 20, 50, 100]) {
  const first = Math.ceil(lo / step), last = Math.floor(hi / step);
  if (last - first + 1 <= max_labels || step == 100) {
    const ticks = [];
    for (let k = first; k <= last; k++) ticks.push(10 ** (k * step));
    return ticks;
  }
}
"""

_MINOR = """
const lo = Math.log10(Math.min(cb_data.start, cb_data.end));
const hi = Math.log10(Math.max(cb_data.start, cb_data.end));
if (!isFinite(lo) || !isFinite(hi) || hi <= lo || hi - lo > 60) return [];
const ticks = [];
const mantissas = hi - lo <= max_labels ? [1, 2, 3, 4, 5, 6, 7, 8, 9] : [1];
for (let e = Math.floor(lo); e <= Math.ceil(hi); e++)
  for (const m of mantissas) {
    const v = m * 10 ** e;
    if (Math.log10(v) >= lo && Math.log10(v) <= hi) ticks.push(v);
  }
return ticks;
"""


def decade_ticker(max_labels: int = MAX_LABELS) -> CustomJSTicker:
    """A ticker for a log axis that labels at most ``max_labels`` powers of ten (every k-th decade)."""
    if not 2 <= max_labels <= 20:
        raise ValueError(f"max_labels must be 2–20; got {max_labels!r}")
    return CustomJSTicker(major_code=_MAJOR, minor_code=_MINOR, args={"max_labels": max_labels})


def readable_log_axes(fig, max_labels: int = MAX_LABELS):
    """Give every log axis of the Bokeh figure ``fig`` a `decade_ticker` (its grid follows); returns ``fig``."""
    for axis in [*fig.xaxis, *fig.yaxis]:
        if isinstance(axis, LogAxis):
            axis.ticker = decade_ticker(max_labels)
    for grid in [*fig.xgrid, *fig.ygrid]:
        axis = fig.xaxis[0] if grid.dimension == 0 else fig.yaxis[0]
        if isinstance(axis, LogAxis):
            grid.ticker = axis.ticker
    return fig
