"""Type stubs of the native module (pyfront/src/lib.rs)."""

from typing import List, Optional, Sequence, Tuple

class ComputationError(Exception):
    """A computation that failed (the command line's exit 1)."""

def run(
    command: str,
    scenario: Optional[str] = None,
    sets: Sequence[str] = ...,
    options: Sequence[Tuple[str, str]] = ...,
    figures: bool = False,
    quiet: bool = True,
) -> Tuple[str, List[Tuple[str, bytes]]]:
    """Runs a command in memory: (printed report, [(file name, bytes)])."""

def publish(out: str, files: Sequence[Tuple[str, bytes]]) -> List[str]:
    """Publishes files into `out` as a command publishes into --out."""

def library_seconds(
    command: str,
    scenario: Optional[str] = None,
    sets: Sequence[str] = ...,
    options: Sequence[Tuple[str, str]] = ...,
    repeats: int = 10,
) -> float:
    """Seconds per call of the library alone (no Python conversion)."""

def read_netcdf(
    data: bytes,
) -> Tuple[
    List[Tuple[str, int]],
    List[Tuple[str, List[str], str, List[float], List[Tuple[str, object]]]],
    List[Tuple[str, object]],
]:
    """(dimensions, variables, global attributes) of a NetCDF-3 file in memory."""

def version() -> str:
    """The library's version."""
