"""concord: exact diagnostic-coverage analysis of redundant measurement chains.

Every function returns plain dicts and lists with the figures of the command line's JSON
output (``concord analyze --format json`` and its siblings), numbers as floats.
"""

from os import PathLike
from typing import Any, Optional, Sequence, Union

__version__: str
DEFAULT_TOLERANCE: float
"""The default target error of every reported probability (``--tolerance``)."""

class ConcordError(Exception):
    """A request concord cannot carry out; the message is the command line's."""

class ArchitectureError(ConcordError):
    """An unreadable or invalid architecture file.

    ``str(e)`` lists every problem as ``file:line:col: error: key: message (fix: ...)``.
    """

    diagnostics: list[dict[str, Any]]
    """Each problem: ``file``, ``line``, ``column`` (1-based; 0 when it has no place),
    ``key``, ``message``, ``fix``."""

class Architecture:
    """A loaded and compiled architecture file."""

    @property
    def path(self) -> str:
        """The file name as given (or the name passed to ``loads``)."""
    @property
    def name(self) -> str:
        """The ``name`` of the file."""
    @property
    def unit(self) -> str:
        """The unit of every deviation, limit and amplitude."""
    @property
    def source(self) -> str:
        """The TOML text as read."""
    @property
    def sites(self) -> list[str]:
        """The fault sites, in file order."""
    @property
    def warnings(self) -> list[str]:
        """The reader's warnings, as the command line prints them."""

def load(path: Union[str, PathLike[str]]) -> Architecture:
    """Loads and compiles an architecture file; raises ArchitectureError."""

def loads(text: str, name: str = "<string>") -> Architecture:
    """Compiles an architecture from TOML text; ``name`` stands for the file in messages."""

def analyze(
    architecture: Architecture, *, tolerance: Optional[float] = None, curves: bool = False
) -> dict[str, Any]:
    """The figures of ``concord analyze --format json`` (``curves`` is ``--with-curves``)."""

def sweep(
    architecture: Architecture,
    vary: str,
    *,
    points: int = 50,
    log: bool = False,
    series: Optional[str] = None,
    series_points: int = 5,
    series_log: bool = False,
    tolerance: Optional[float] = None,
) -> dict[str, list[Any]]:
    """A parameter sweep (``vary="safety.limit=1:4"`` or ``"KEY=V1,V2"``) as columns.

    Columns: ``index``, the swept key, the series key if any, ``false_alarm``,
    ``false_alarm_error``, ``residual_fit``, ..., ``asil_spfm``, ``asil_lfm``, then per
    fault site ``SITE.dc``, ``SITE.dc_error``, ``SITE.dc_all_dangerous``,
    ``SITE.dc_all_dangerous_error``, ``SITE.p_vu``, ``SITE.p_vu_error``,
    ``SITE.worst_sigma`` (None where a figure has none); for a file with an
    ``[isolation]`` section then ``continues``, ``shutdown``, ``fault_stays`` and per fault
    site ``SITE.isolated``, ``SITE.wrong_channel``, ``SITE.none_blamed``, each followed by
    its ``_error``. Ctrl-C stops it.
    """

def tune(
    architecture: Architecture,
    target_dc: Union[float, str],
    *,
    figure: str = "dc_all_dangerous",
    check: Optional[str] = None,
    sites: Optional[Sequence[str]] = None,
    scale: str = "0.1:10",
    points: int = 41,
    with_confirmation: bool = False,
    tolerance: Optional[float] = None,
) -> dict[str, Any]:
    """Comparator tuning, as ``concord tune FILE --target-dc X --format json``."""

def compare(
    architectures: Sequence[Architecture],
    *,
    figure: str = "dc",
    tolerance: Optional[float] = None,
) -> dict[str, Any]:
    """Architectures side by side, as ``concord compare FILE... --format json``."""

def version() -> str:
    """The version of the concord library the module was built from."""
