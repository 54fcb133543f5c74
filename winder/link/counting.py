"""The host's turn count: monotonic across reconnects, reboots and counter wrap. Pure."""

from __future__ import annotations


class TurnTracker:
    """Unwrap a device counter that runs modulo ``wrap`` into a host total.

    ``total`` is in counts; ``turns`` = total / ``counts_per_rev``. A raw value is
    read as the shortest signed step from the previous one, so a counter that wraps
    (or a quadrature counter that runs backwards a little) is followed exactly as
    long as fewer than ``wrap / 2`` counts pass between two reports.
    """

    def __init__(self, counts_per_rev: int = 1, wrap: int = 2**32):
        self.counts_per_rev = counts_per_rev
        self.wrap = wrap
        self.total = 0
        self._last: int | None = None
        self.offset = 0          # counts carried over device reboots

    @property
    def turns(self) -> float:
        return self.total / self.counts_per_rev

    def update(self, raw: int) -> int:
        """Feed one raw device count; return the host total (counts)."""
        raw %= self.wrap
        if self._last is None:
            self.total = raw
        else:
            step = (raw - self._last) % self.wrap
            if step >= self.wrap // 2:
                step -= self.wrap
            self.total += step
        self._last = raw
        return self.total

    def set(self, total: int, raw: int) -> None:
        """The device counter now reads ``raw`` and the host total is ``total``."""
        self.total = total
        self._last = raw % self.wrap

    def rebooted(self, counts_per_rev: int, wrap: int) -> None:
        """The device restarted with its counter at 0; keep the total (offset)."""
        if counts_per_rev != self.counts_per_rev:
            # keep turns, not counts, if the device changed resolution
            self.total = round(self.total * counts_per_rev / self.counts_per_rev)
        self.counts_per_rev, self.wrap = counts_per_rev, wrap
        self.offset = self.total
        self._last = 0

    def reconnected(self, counts_per_rev: int, wrap: int) -> None:
        """Same boot: the next raw value continues from the last one."""
        self.counts_per_rev, self.wrap = counts_per_rev, wrap
