"""Memory figures of the running process, for the benchmarks (Linux /proc)."""

from __future__ import annotations

from pathlib import Path

__all__ = ["status_kib", "reset_peak"]


def status_kib(key: str) -> int:
    """A memory figure (kiB) from /proc/self/status, e.g. VmHWM (peak RSS) or VmRSS."""
    with open("/proc/self/status", encoding="ascii") as fh:
        for line in fh:
            if line.startswith(key + ":"):
                return int(line.split()[1])
    raise KeyError(key)


def reset_peak() -> bool:
    """Reset VmHWM to the current RSS (Linux >= 4.0: write 5 to clear_refs); False if refused."""
    try:
        Path("/proc/self/clear_refs").write_text("5")
    except OSError:
        return False
    return True
