"""Which results a drawing shows: one load case or combination, or the
envelope (max/min curves) of a family of combinations
(:func:`select_results`).  Results are the solver's ``CaseResult``
objects, cases then combinations; nothing is computed here."""
from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

from ..errors import SettingsError

__all__ = ["Selection", "select_results", "missing_family"]


# -- which results to draw -----------------------------------------------------


@dataclass
class Selection:
    """The results a drawing shows.

    label : words for the notes ("combination 1.2D+1.6L", "envelope of 6 LRFD
        combinations")
    results : the CaseResult objects (one, or the envelope's members)
    envelope : True when max/min curves over ``results`` are drawn
    """

    label: str
    results: list
    envelope: bool


def _squash(name: str) -> str:
    return "".join(name.split()).lower()


def missing_family(results: Sequence, show: str | None) -> str | None:
    """A warning when ``show`` asks for the envelope of a family of
    combinations none of ``results`` belongs to (``envelope:LRDF``): the
    drawing then falls back to every combination, which was not asked for.
    Nothing for the default ``envelope:LRFD`` (a drawing with only its own
    combinations, no built-in set, draws them all as documented)."""
    import difflib

    show = (show or "envelope:LRFD").strip()
    fam = show.partition(":")[2].strip() if show.lower().startswith("envelope") else ""
    if fam.upper() == "LRFD":
        return None
    combos = [r for r in results if r.kind == "combination"]
    families = sorted({r.family for r in combos if r.family})
    if not fam or fam.lower() == "all" or not combos or not families \
            or any(f.lower() == fam.lower() for f in families):
        return None
    by_upper = {f.upper(): f for f in families}
    close = difflib.get_close_matches(fam.upper(), list(by_upper), n=1)
    like = f"; did you mean envelope:{by_upper[close[0]]}?" if close else ""
    return (f"the drawing shows {show!r}, but no combination is of family {fam!r} (families: "
            f"{', '.join(families)}): the envelope of every combination is drawn instead{like}")


def select_results(results: Sequence, show: str | None) -> Selection:
    """Pick what to draw.

    ``show`` is a result name (spaces and case ignored), ``"envelope"`` /
    ``"envelope:all"`` (every combination), or ``"envelope:<family>"``
    (combinations whose ``family`` is that name, e.g. LRFD or ASD; without
    a ``family`` attribute, names starting with it).  ``None`` means
    ``"envelope:LRFD"``.  An envelope with no matching combination falls
    back to all combinations, then to all results; an envelope of a single
    result is drawn as that result.

    Raises :class:`SettingsError` for an unknown result name.
    """
    results = list(results)
    if not results:
        raise SettingsError("there are no results to draw")
    show = (show or "envelope:LRFD").strip()
    if show.lower().startswith("envelope"):
        _, _, fam = show.partition(":")
        fam = fam.strip() or "all"
        combos = [r for r in results if r.kind == "combination"]
        chosen, what = [], ""
        if fam.lower() != "all":
            chosen = [r for r in combos if r.family.lower() == fam.lower()]
            if not chosen and not any(r.family for r in combos):
                chosen = [r for r in combos if r.name.lower().startswith(fam.lower())]
            what = f"{fam} combinations"
        if not chosen:
            chosen, what = combos, "combinations"
            if fam.lower() != "all" and combos:
                what = f"combinations (no {fam} combination found)"
        if not chosen:
            chosen, what = results, "load cases (no combinations defined)"
        if len(chosen) == 1:
            r = chosen[0]
            return Selection(f"{'combination' if r.kind == 'combination' else 'load case'} {r.name}", chosen, False)
        return Selection(f"envelope of {len(chosen)} {what}: " + ", ".join(r.name for r in chosen), chosen, True)
    want = _squash(show)
    for r in results:
        if _squash(r.name) == want:
            return Selection(f"{'combination' if r.kind == 'combination' else 'load case'} {r.name}", [r], False)
    raise SettingsError(
        f"no load case or combination named {show!r} to draw; available: "
        + ", ".join(r.name for r in results) + ", envelope:LRFD, envelope:ASD, envelope:all",
        key="combinations.draw",
    )
