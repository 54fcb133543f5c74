"""Opening a port: any pyserial URL, exclusive where the backend supports it.

Errors become one-line :class:`~winder.link.errors.PortError` subclasses.
"""

from __future__ import annotations

import errno
import os

import serial

from winder.link.errors import PortBusy, PortError, PortNotFound, PortPermission

DIALOUT_FIX = (
    "on Linux add yourself to the serial-port group: sudo usermod -aG dialout $USER "
    "(uucp on some distributions), then log out and back in"
)


def open_port(url: str, *, baudrate: int = 115200, timeout: float = 0.05) -> serial.SerialBase:
    """Open ``url`` (a device path or a pyserial URL such as ``socket://host:port``).

    8N1, no flow control, ``timeout`` seconds per read. Exclusive access (an
    advisory ``flock`` on POSIX) is requested for local ports.
    """
    kwargs: dict = {"baudrate": baudrate, "timeout": timeout, "write_timeout": 2.0}
    if "://" not in url:
        kwargs["exclusive"] = True
        if not os.path.exists(url):
            raise PortNotFound(f"no such port: {url}")
    try:
        return serial.serial_for_url(url, **kwargs)
    except serial.SerialException as err:
        raise classify(url, err) from err
    except (OSError, ValueError) as err:
        raise classify(url, err) from err


def classify(url: str, err: BaseException) -> PortError:
    """Map an exception from opening ``url`` to a one-line :class:`PortError`."""
    code = getattr(err, "errno", None)
    text = " ".join(str(err).split())
    if code in (errno.ENOENT, errno.ENODEV, errno.ENXIO) or "No such file" in text:
        return PortNotFound(f"no such port: {url}")
    if code in (errno.EACCES, errno.EPERM) or "Permission denied" in text:
        return PortPermission(f"permission denied on {url}: {DIALOUT_FIX}")
    if code in (errno.EBUSY, errno.EAGAIN) or "exclusively lock" in text or "busy" in text:
        return PortBusy(f"port busy: {url} is held by another program (close it and retry)")
    if code == errno.ECONNREFUSED or "refused" in text:
        return PortNotFound(f"nothing is listening at {url}")
    return PortError(f"could not open {url}: {text}")
