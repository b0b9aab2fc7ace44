"""Type stubs of noisewright, the extension module built from python/src (PyO3).

Samples are float64 in the profile's unit (V, A or a sensor unit); frequencies in Hz; times
in seconds.
"""

import os
from typing import Any, Optional, Sequence, Tuple, Union

import numpy as np
import numpy.typing as npt

__version__: str

PathLike = Union[str, "os.PathLike[str]"]
ProfileLike = Union["Profile", str, "os.PathLike[str]"]
Quantity = Union[float, str]
Band = Union[str, Tuple[float, float]]

class ProfileError(ValueError):
    """A profile that cannot be read or used; the message names the file, line, key and
    what is expected, as the command line prints it."""

    file: str
    line: Optional[int]
    key: str

class Profile:
    """A validated noise profile (read-only)."""

    @staticmethod
    def from_path(path: PathLike) -> "Profile":
        """Reads and validates the profile file (TOML) at `path`."""
    @staticmethod
    def from_toml(text: str, label: str = "<string>") -> "Profile":
        """Validates a profile given as TOML text; `label` names it in error messages."""
    @property
    def sample_rate(self) -> float:
        """The sample rate, Hz."""
    @property
    def unit(self) -> str:
        """The samples' unit symbol: "V", "A", or a sensor unit such as "Pa"."""
    @property
    def band(self) -> Tuple[float, float]:
        """The band of interest, (low, high) in Hz."""
    @property
    def band_order(self) -> int:
        """The Butterworth order of the band's upper edge (0: brick wall)."""
    @property
    def channels(self) -> int:
        """The number of channels."""
    @property
    def name(self) -> Optional[str]:
        """The profile's name, or None."""
    @property
    def label(self) -> str:
        """How errors and manifests name the profile."""
    def to_dict(self) -> dict[str, Any]:
        """The validated profile in SI units (the manifest's `profile` object)."""

class Generator:
    """A profile's noise as a stream: consecutive fill() and read() calls continue one run,
    bit for bit what `generate --format raw --sample-format f64` writes."""

    def __init__(self, profile: ProfileLike, seed: int = 1, start: int = 0) -> None: ...
    def fill(self, array: npt.NDArray[np.float64]) -> None:
        """Writes the next samples into a C-contiguous float64 array of shape (n,) or
        (n, channels), in place."""
    def read(self, n: int) -> npt.NDArray[np.float64]:
        """The next `n` frames as a new array of shape (n,) or (n, channels)."""
    def density(self, f: npt.ArrayLike) -> npt.NDArray[np.float64]:
        """The designed one-sided density, unit²/Hz, at the frequencies `f` (Hz)."""
    @property
    def channels(self) -> int: ...
    @property
    def sample_rate(self) -> float: ...
    @property
    def position(self) -> int:
        """The index of the next frame."""
    @property
    def expected_rms(self) -> float:
        """Expected RMS of each channel (AC + DC), in the profile's unit."""

def generate(
    profile: ProfileLike, samples: int, seed: int = 1, start: int = 0
) -> npt.NDArray[np.float64]:
    """`samples` frames from frame `start`: shape (samples,) or (samples, channels)."""

def render(
    profile: ProfileLike,
    path: PathLike,
    seed: int = 1,
    samples: Optional[int] = None,
    seconds: Optional[Quantity] = None,
    level_dbfs: Optional[Quantity] = None,
    full_scale: Optional[Quantity] = None,
    sample_format: Optional[str] = None,
    start: int = 0,
) -> Optional[dict[str, Any]]:
    """Writes `path` and its manifest as `generate` does; returns the manifest (None for a
    device or pipe)."""

def analyze(
    samples: npt.ArrayLike, sample_rate: float, profile: Optional[ProfileLike] = None
) -> dict[str, Any]:
    """The dict `analyze --json` prints for one channel of samples at `sample_rate` Hz."""

def budget(
    profile: ProfileLike, bands: Optional[Sequence[Band]] = None, order: Optional[int] = None
) -> dict[str, Any]:
    """The dict `budget --json` prints."""
