"""Flags raised on readings, meters, piezometers and tests: kept in the result, listed in the output."""
from __future__ import annotations

from dataclasses import dataclass, field

import pandas as pd


@dataclass
class Flags:
    """A list of (table, item, flag, detail) entries."""

    entries: list[tuple[str, str, str, str]] = field(default_factory=list)

    def add(self, table: str, item: str, flag: str, detail: str) -> None:
        """Record one flag on ``item`` of ``table``."""
        self.entries.append((table, str(item), flag, detail))

    def frame(self) -> pd.DataFrame:
        """The flags as a table with columns table, item, flag, detail."""
        return pd.DataFrame(self.entries, columns=["table", "item", "flag", "detail"])

    def counts(self) -> dict[str, int]:
        """How many times each flag was raised."""
        out: dict[str, int] = {}
        for _, _, flag, _ in self.entries:
            out[flag] = out.get(flag, 0) + 1
        return out
