"""The link's exception family; every error derives from :class:`LinkError`."""

from __future__ import annotations

from winder.errors import WinderError


class LinkError(WinderError):
    """Base of every error the link raises on purpose. ``str()`` is one line."""


class FrameError(LinkError):
    """A received line could not be decoded (``reason``: crc, syntax, length, ...)."""

    def __init__(self, reason: str, line: bytes = b""):
        self.reason = reason
        self.line = line
        super().__init__(f"bad line ({reason}): {line[:40]!r}")


class PortError(LinkError):
    """The port could not be opened."""


class PortNotFound(PortError):
    """No such port (path or URL)."""


class PortPermission(PortError):
    """The operating system refused access to the port."""


class PortBusy(PortError):
    """Another program holds the port."""


class HandshakeError(LinkError):
    """The device did not answer the handshake."""


class LinkDown(LinkError):
    """The link is down (reconnecting or closed)."""


class CommandTimeout(LinkError):
    """No acknowledgement after all retries."""


class CommandRejected(LinkError):
    """The device answered NAK; ``code`` is the reason code."""

    def __init__(self, verb: str, code: str):
        self.verb = verb
        self.code = code
        super().__init__(f"device rejected {verb}: {code} ({REASONS.get(code, 'unknown reason')})")


REASONS = {
    "SYN": "syntax error",
    "UNK": "unknown command",
    "ARG": "bad argument",
    "CAP": "capability not present",
    "STA": "not allowed in the current state",
    "FUL": "pass queue full",
    "FLT": "fault latched; clear it first",
    "LEN": "line too long",
    "CRC": "checksum mismatch",
}
