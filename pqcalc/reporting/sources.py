"""The standards and rules a report relies on, with what each was used for."""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING

if TYPE_CHECKING:  # pragma: no cover
    from ..installation import Assessment, LineupEntry

__all__ = ["standards_applied"]


# --------------------------------------------------------------------------- standards
def standards_applied(assessment: Assessment, lineup: Sequence[LineupEntry] = ()
                      ) -> list[tuple[str, str]]:
    """(reference with edition, what it was used for) for every rule source the report
    relies on: the lineup's IEC 61000-3-2 rules and every check's source."""
    used: dict[str, list[str]] = {}

    def add(ref: str, what: str) -> None:
        lst = used.setdefault(ref, [])
        if what not in lst:
            lst.append(what)

    for e in lineup:
        for s in e.states:
            for r in s.result.rules:
                add(r.reference, f"fixture lineup ({r.rule})")
            if not s.result.rules:
                add("IEC 61000-3-2:2018 (ed. 5.0) + AMD1:2020", f"fixture lineup "
                    f"({s.result.rule})")
    for sc in assessment.scenarios:
        for c in sc.all_checks():
            add(c.source, c.name)
    return [(ref, ", ".join(w)) for ref, w in used.items()]


