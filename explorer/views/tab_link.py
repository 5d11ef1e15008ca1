"""The Measured data and Sizing tabs' inputs in the page's link, beside the pore's
(`porefill.explorer.views.scenario_io.ScenarioIO.sync_url`).

One query key per input, named ``measured_<key>`` or ``sizing_<key>`` after the scenario file's keys
(`porefill.explorer.files.page_choices`), in the file's words. Only inputs that differ from what the page
opened with are written, so a link stays short. A link's values are checked as a file's are: a refused
one is named in the page's message and the page keeps its own.
"""
from __future__ import annotations

from dataclasses import fields

import param

from porefill.explorer.files.page_choices import MeasuredChoices, SizingChoices
from porefill.explorer.views.tab_choices import (measured_choices, show_measured_choices, show_sizing_choices,
                                                 sizing_choices, tab_widgets)

__all__ = ["LINK_KEYS", "TabLink"]

_KINDS = {"measured": MeasuredChoices, "sizing": SizingChoices}
# query key -> (tab, the file's key)
LINK_KEYS = {f"{tab}_{f.name}": (tab, f.name) for tab, kind in _KINDS.items() for f in fields(kind)}
_TEXT = {"sizes", "walls", "temperatures"}       # typed text: read from the raw query ("10" stays text)


class TabLink(param.Parameterized):
    """The tabs' inputs that differ from the page's first ones, one parameter per query key (None: as
    opened); `porefill.explorer.views.scenario_io` ties it to the URL with `pn.state.location.sync`."""

    def __init__(self, measured, sizing, **params):
        for key in LINK_KEYS:
            if key not in self.param:
                self.param.add_parameter(key, param.Parameter(default=None, precedence=-1))
        super().__init__(**params)
        self._measured, self._sizing = measured, sizing
        self._first = self._now()
        for widget in tab_widgets(measured, sizing):
            widget.param.watch(self._follow, "value")

    def _now(self) -> dict:
        out = {}
        if self._measured is not None:
            out.update({f"measured_{k}": v for k, v in measured_choices(self._measured).to_dict().items()})
        if self._sizing is not None:
            out.update({f"sizing_{k}": v for k, v in sizing_choices(self._sizing).to_dict().items()})
        return out

    def _follow(self, *_) -> None:
        now = self._now()
        values = {k: (now.get(k) if now.get(k) != self._first.get(k) else None) for k in LINK_KEYS}
        self.param.update(**{k: v for k, v in values.items() if getattr(self, k) != v})

    def apply(self, query: dict, raw: dict) -> dict:
        """Show the link's tab inputs (``query``: Panel's decoded values, ``raw``: the query's text), each
        checked as a file's; {key: why} of the refused ones."""
        good = {tab: {} for tab in _KINDS}
        refused = {}
        for key, (tab, name) in LINK_KEYS.items():
            if key not in query or query[key] is None:
                continue
            value = raw.get(key, query[key]) if name in _TEXT else query[key]
            if isinstance(value, list):
                value = tuple(value)
            try:
                _KINDS[tab](**{name: value})
            except (TypeError, ValueError) as exc:
                refused[key] = str(exc).splitlines()[0][:160]
                continue
            good[tab][name] = value
        if good["measured"] and self._measured is not None:
            show_measured_choices(self._measured, MeasuredChoices(**good["measured"]))
        if good["sizing"] and self._sizing is not None:
            show_sizing_choices(self._sizing, SizingChoices(**good["sizing"]))
        self._follow()
        return refused
