"""Winder link: protocol codec, serial transport, driver and simulated winder (layer 3).

The wire protocol is specified in ``firmware-protocol.md`` at the top of the
repository; this package is the host side of it plus a simulated device.

Modules
-------
``errors``    the exception family (all derive from :class:`LinkError`, itself a
              :class:`winder.errors.WinderError`).
``messages``  wire messages (:class:`Hello`, :class:`Ack`, :class:`Nak`,
              :class:`StatusReport`, :class:`EventReport`, :class:`PlainCount`,
              :class:`Command`) and consumer events (:class:`Status`,
              :class:`DeviceEvent`, :class:`LinkLost`, :class:`LinkRestored`),
              :class:`DeviceInfo`, :class:`LinkStats`.
``codec``     pure: ``crc16(data) -> int`` (CRC-16/CCITT-FALSE, ``binascii.crc_hqx``
              with init 0xFFFF), ``encode_command``, ``encode_device``,
              ``parse_device_line``, ``parse_host_line`` and :class:`LineFramer`
              (bytes in, complete lines out, bounded length). No I/O.
``counting``  pure: :class:`TurnTracker`, the host's monotonic count across
              reconnects, reboots (offset) and counter wrap.
``transport`` ``open_port(url, ...)``: ``serial.serial_for_url`` with exclusive
              access, errors mapped to one-line :class:`PortError` subclasses.
``driver``    :class:`WinderLink`, the threaded driver.
``sim``       the simulated winder (``winder sim``).
``simproc``   :func:`start_sim`: run ``python -m winder sim --pty`` as a subprocess
              for tests and demos; returns a :class:`SimProcess` (``.device``,
              ``.control(cmd) -> dict``, ``.truth() -> dict``, ``.close()``).
``bench``     :func:`parse_rate`: codec parse rate in lines per second.

Driver API (``from winder.link import WinderLink``)
---------------------------------------------------
``WinderLink(url, *, on_event=None, events=None, baudrate=115200,
hello_timeout=2.0, ack_timeout=0.25, retries=4, heartbeat_s=0.25,
silence_s=1.0, reconnect=True, backoff_s=(0.1, 2.0), plain_cpr=1)``

- ``open() -> DeviceInfo``: open the port (exclusive), wait for the device's
  power-on ``HELLO`` (opening may reset a microcontroller), flush, handshake
  (``HI``). A device that only prints integers is accepted as protocol 0
  (capabilities ``{"count"}``, ``counts_per_rev = plain_cpr``). Raises
  :class:`PortNotFound`, :class:`PortPermission` (message says how to join the
  ``dialout`` group), :class:`PortBusy`, :class:`HandshakeError`.
- ``info: DeviceInfo`` (``protocol``, ``boot_id``, ``capabilities``
  frozenset[str], ``counts_per_rev``, ``wrap``, ``watchdog_s``, ``queue_max``,
  ``firmware``, ``state``). Replaced after every reconnect.
- ``turns: float``, ``counts: int``: host-tracked count (monotonic across
  reconnects, reboots and counter wrap; only ``zero``/``preload`` move it back).
- ``status: Status | None`` latest status; ``connected: bool``; ``stats: LinkStats``.
- Commands (block the calling thread until ACK; retry with the same sequence
  number on timeout; raise :class:`CommandRejected` (``.code``) on NAK,
  :class:`CommandTimeout`, :class:`LinkDown` while disconnected):
  ``zero()``, ``preload(counts: int)``,
  ``queue_pass(start_mm, end_mm, turns, rpm)``, ``go()`` (start or continue),
  ``pause()`` (decelerate and hold; queue kept), ``resume()`` (= ``go()``),
  ``stop()`` (stop now, clears queue), ``clear()`` (clear latched faults),
  ``measure()`` (request a resistance reading; arrives as a ``DeviceEvent``).
  ``send(verb, *args)`` is the general form.
- ``wait_for(predicate, timeout) -> Status``: block until a status satisfies
  ``predicate`` (raises :class:`CommandTimeout`).
- ``close()``: idempotent; commands ``HALT`` first (best effort), then stops the
  thread and closes the port. Also a context manager.

Events (delivered from the link thread)
---------------------------------------
``Status(count, turns, rpm, guide_mm, state, faults, queued, t)``
``DeviceEvent(kind, data, t)`` kinds: ``limit``, ``stall``, ``pedal``,
``estop``, ``reading`` (``data["ohm"]``), ``boot``.
``LinkLost(reason, t)``; ``LinkRestored(rebooted, info, turns, t)``.

Thread rules
------------
One link thread (``winder-link``) owns all reads, the heartbeat, link-loss
detection and reconnection; writes are serialised by a lock. ``on_event`` is
called *on the link thread*: it must return quickly, must not block and must not
call command methods (their ACK is read by that same thread). If ``events`` (a
``queue.Queue``) is given, every event is also ``put_nowait`` there; a UI thread or
asyncio task consumes it. Never touch a UI object from ``on_event``. Command
methods may be called from any thread other than the link thread; one command is
in flight at a time.
"""

from __future__ import annotations

from winder.link.errors import (
    CommandRejected,
    CommandTimeout,
    FrameError,
    HandshakeError,
    LinkDown,
    LinkError,
    PortBusy,
    PortError,
    PortNotFound,
    PortPermission,
)
from winder.link.messages import (
    DeviceEvent,
    DeviceInfo,
    LinkLost,
    LinkRestored,
    LinkStats,
    Status,
)

__all__ = [
    "CommandRejected", "CommandTimeout", "DeviceEvent", "DeviceInfo", "FrameError",
    "HandshakeError", "LinkDown", "LinkError", "LinkLost", "LinkRestored", "LinkStats",
    "PortBusy", "PortError", "PortNotFound", "PortPermission", "Status", "WinderLink",
]


def __getattr__(name: str):  # lazy: importing the package must not open threads or serial
    if name == "WinderLink":
        from winder.link.driver import WinderLink

        return WinderLink
    raise AttributeError(name)
