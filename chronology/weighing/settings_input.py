"""Whole-number settings of a weighing or a sensitivity request, each within its bounds."""

from __future__ import annotations

from chronology.runs.compile import ModelRefused

__all__ = ["whole_number_settings"]


def whole_number_settings(data, limits: dict[str, tuple[int, int]], defaults: dict[str, int] | None = None) -> dict:
    """``data`` (a request's ``settings`` object) checked against ``limits`` (name -> (least, greatest)).

    Missing names take ``defaults`` where given and are left out otherwise;
    anything else is refused with ``ModelRefused`` (400) naming the field.
    """
    data = data or {}
    if not isinstance(data, dict):
        raise ModelRefused("invalid-input", "settings is a JSON object", status=400, field="settings")
    unknown = sorted(set(data) - set(limits))
    if unknown:
        raise ModelRefused("invalid-input", f"unknown setting {unknown[0]!r}; allowed: {', '.join(limits)}",
                           status=400, field=f"settings.{unknown[0]}")
    out = {}
    for name, (lo, hi) in limits.items():
        if name not in data and name not in (defaults or {}):
            continue
        v = data.get(name, (defaults or {}).get(name))
        if not isinstance(v, int) or isinstance(v, bool) or not lo <= v <= hi:
            raise ModelRefused("out-of-range", f"{name} is a whole number from {lo} to {hi}", status=400,
                               field=f"settings.{name}")
        out[name] = v
    return out
