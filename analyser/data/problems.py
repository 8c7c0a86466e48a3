"""Collecting what is wrong with the input, so that every problem is reported at once.

Readers add problems as they find them and carry on with whatever is still
usable; the loader raises one CampaignError with all of them at the end.
"""

from __future__ import annotations

from ..campaign import CampaignError, Problem


class Problems:
    """An ordered collection of Problem, grouped by file and sorted by line when raised;
    `lead_file` (the campaign file) comes first, the others in the order first mentioned."""

    def __init__(self, lead_file: str = ""):
        self._items: list[Problem] = []
        self._lead_file = str(lead_file)

    def add(self, file, message: str, line: int = 0, column: str = "") -> None:
        self._items.append(Problem(str(file), message, int(line or 0), column))

    def __len__(self) -> int:
        return len(self._items)

    def sorted(self) -> list[Problem]:
        """The problems by file, then by line."""
        first_seen: dict[str, int] = {self._lead_file: 0}
        for p in self._items:
            first_seen.setdefault(p.file, len(first_seen))
        return sorted(self._items, key=lambda p: (first_seen[p.file], p.line))

    def raise_if_any(self) -> None:
        if self._items:
            raise CampaignError(self.sorted())
