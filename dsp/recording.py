"""Read recordings: audio files of any format soundfile reads, any channel count.

A :class:`Recording` holds the raw file values as one read-only float32 array of
shape ``(n_channels, n_frames)`` plus the file facts (rate, format, SHA-256 of
the file bytes).  :func:`sensor_signal` applies a sensor's scale;
:func:`signal_quality` finds non-finite samples, flat channels and clipping.

Memory: the file is decoded in blocks straight into the final array, so the peak
is the float32 array plus one block; no float64 copy of the whole file is made.
"""

from __future__ import annotations

import hashlib
import os
import threading
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .errors import GearbenchError, RecordingError

#: Standard acceleration of gravity, m/s^2 (exact by definition; 3rd CGPM 1901, BIPM SI Brochure).
G_N_M_S2 = 9.80665

#: Frames decoded per block by :func:`read_recording`.
BLOCK_FRAMES = 1 << 16

#: Minimum run of consecutive samples at the rail that counts as clipping.
MIN_CLIP_RUN = 3


@dataclass(frozen=True, eq=False)
class Recording:
    """One recording, as read from its file.

    Attributes
    ----------
    path : str
        Absolute path of the file.
    sample_rate_hz : float
        Sampling rate, Hz.
    n_frames : int
        Number of samples per channel.
    n_channels : int
        Number of channels.
    duration_s : float
        ``n_frames / sample_rate_hz``, s.
    sha256 : str
        SHA-256 of the file bytes, hexadecimal.
    format, subtype : str
        Container and sample encoding as soundfile names them (``"FLAC"``, ``"PCM_24"``).
    data : numpy.ndarray
        float32, shape ``(n_channels, n_frames)``, C-contiguous, read-only: the raw file
        values (PCM is normalised to [-1, 1) by soundfile; float files keep their values).
    """

    path: str
    sample_rate_hz: float
    n_frames: int
    n_channels: int
    duration_s: float
    sha256: str
    format: str
    subtype: str
    data: np.ndarray = field(repr=False)

    def channel(self, i: int) -> np.ndarray:
        """Read-only float32 view of channel ``i`` (0-based)."""
        if isinstance(i, bool) or not isinstance(i, (int, np.integer)):
            raise RecordingError(f"channel index {i!r} is not an integer; give a 0-based channel number")
        if not 0 <= i < self.n_channels:
            raise RecordingError(
                f"channel {i} does not exist in {os.path.basename(self.path)}, which has "
                f"{self.n_channels} channel{'s' if self.n_channels != 1 else ''} (0 to {self.n_channels - 1}); "
                "fix the channel number in the model"
            )
        return self.data[int(i)]

    def time_s(self) -> np.ndarray:
        """Sample times, s (float64, starting at 0)."""
        return np.arange(self.n_frames) / self.sample_rate_hz

    def facts(self) -> dict:
        """File facts as plain JSON-ready values."""
        return {
            "path": self.path,
            "sha256": self.sha256,
            "sample_rate_hz": self.sample_rate_hz,
            "duration_s": self.duration_s,
            "channels": self.n_channels,
            "n_frames": self.n_frames,
            "format": self.format,
            "subtype": self.subtype,
        }


def _sha256_of_file(path: str) -> str:
    with open(path, "rb") as fh:
        return hashlib.file_digest(fh, "sha256").hexdigest()


class _Hasher(threading.Thread):
    """SHA-256 of a file, computed in a background thread."""

    def __init__(self, path: str):
        super().__init__(name="gearbench-sha256", daemon=True)
        self.path = path
        self._digest: str | None = None
        self._error: OSError | None = None

    def run(self) -> None:
        try:
            self._digest = _sha256_of_file(self.path)
        except OSError as exc:
            self._error = exc

    def result(self) -> str:
        if self._error is not None:
            raise RecordingError(
                f"cannot read recording {self.path} ({self._error.strerror}); check its permissions"
            ) from self._error
        assert self._digest is not None
        return self._digest


def read_recording(path) -> Recording:
    """Read a recording file of any format and channel count that soundfile reads.

    Parameters
    ----------
    path : str or os.PathLike
        The file (WAV, FLAC, OGG, AIFF, ...).

    Returns
    -------
    Recording
        Raw file values as float32, shape ``(n_channels, n_frames)``, read-only.

    Raises
    ------
    RecordingError
        The file is missing, unreadable, not an audio file, corrupt or empty.
    """
    import soundfile as sf

    p = Path(path).expanduser()
    name = str(p)
    if not p.exists():
        raise RecordingError(f"recording {name} does not exist; check the path")
    if p.is_dir():
        raise RecordingError(f"recording {name} is a folder, not a file; give the audio file inside it")
    if p.stat().st_size == 0:
        raise RecordingError(f"recording {name} is an empty file (0 bytes); record or copy it again")
    # Hash the file bytes in a second thread while the first decodes (hashlib and
    # libsndfile both release the GIL), so the SHA-256 costs little wall time.
    hashing = _Hasher(name)
    hashing.start()
    try:
        with sf.SoundFile(name, "r") as fh:
            n_channels = int(fh.channels)
            rate = float(fh.samplerate)
            fmt = str(fh.format)
            subtype = str(fh.subtype)
            n_expected = int(fh.frames) if fh.seekable() else -1
            progress = [0]
            try:
                data = _decode(fh, n_channels, n_expected, progress)
            except (sf.LibsndfileError, RuntimeError, sf.SoundFileError) as exc:
                if n_expected > 0:
                    progress[0] = max(progress[0], _decodable_frames(name))
                if progress[0] > 0 and n_expected > 0 and rate > 0:
                    detail = getattr(exc, "error_string", None) or str(exc)
                    raise RecordingError(
                        f"recording {name} breaks off after {progress[0] / rate:.2f} s of the "
                        f"{n_expected / rate:.2f} s its header announces ({detail}); the file is truncated or "
                        "damaged - copy it again from the recorder or export it again"
                    ) from exc
                raise
    except RecordingError:
        raise
    except sf.LibsndfileError as exc:
        raise RecordingError(
            f"cannot decode recording {name} ({exc.error_string}); it is corrupt or not an audio file "
            "soundfile reads - export it again as WAV or FLAC"
        ) from exc
    except (RuntimeError, sf.SoundFileError) as exc:
        raise RecordingError(
            f"cannot decode recording {name} ({exc}); it is corrupt or truncated - export it again as WAV or FLAC"
        ) from exc
    finally:
        hashing.join()
    sha256 = hashing.result()

    n_frames = data.shape[1]
    if n_frames == 0 or n_channels == 0:
        raise RecordingError(f"recording {name} holds no samples; record or export it again")
    if rate <= 0:
        raise RecordingError(f"recording {name} declares a sampling rate of {rate} Hz; fix the file header")
    data.setflags(write=False)
    return Recording(
        path=str(p.resolve()),
        sample_rate_hz=rate,
        n_frames=n_frames,
        n_channels=n_channels,
        duration_s=n_frames / rate,
        sha256=sha256,
        format=fmt,
        subtype=subtype,
        data=data,
    )


def _decodable_frames(name: str, block: int = 4096) -> int:
    """Frames that decode before the first error (for the message about a file that breaks off)."""
    import soundfile as sf

    done = 0
    try:
        with sf.SoundFile(name, "r") as fh:
            while True:
                n = len(fh.read(block, dtype="float32"))
                done += n
                if n < block:
                    break
    except (sf.LibsndfileError, RuntimeError, sf.SoundFileError):
        pass
    return done


def _decode(fh, n_channels: int, n_expected: int, progress: list | None = None) -> np.ndarray:
    """Decode an open SoundFile into a C-contiguous ``(n_channels, n_frames)`` float32 array.

    ``progress[0]``, when given, holds the frames decoded so far (for the error message
    of a file that breaks off).
    """
    progress = [0] if progress is None else progress
    if n_expected < 0:  # not seekable: frame count unknown, read everything
        inter = fh.read(dtype="float32", always_2d=True)
        return np.ascontiguousarray(inter.T)
    data = np.empty((n_channels, n_expected), dtype=np.float32)
    if n_channels == 1:
        # Mono: decode straight into the final row, no staging block needed.
        done = 0
        while done < n_expected:
            want = min(BLOCK_FRAMES, n_expected - done)
            got = fh.read(want, dtype="float32", out=data[0, done:done + want])
            n_got = len(got)
            done += n_got
            progress[0] = done
            if n_got < want:
                break
        return data[:, :done] if done < n_expected else data
    block = np.empty((BLOCK_FRAMES, n_channels), dtype=np.float32)
    done = 0
    while done < n_expected:
        want = min(BLOCK_FRAMES, n_expected - done)
        got = fh.read(want, dtype="float32", out=block[:want])
        n_got = len(got)
        data[:, done:done + n_got] = got.T
        done += n_got
        progress[0] = done
        if n_got < want:
            break
    if done < n_expected:
        data = np.ascontiguousarray(data[:, :done])
    return data


def sensor_signal(recording: Recording, sensor) -> np.ndarray:
    """Signal of one sensor in its physical units (the sensor's ``units``).

    Parameters
    ----------
    recording : Recording
    sensor : dsp.model.Sensor
        Uses ``sensor.channel`` and ``sensor.scale`` (physical units per file value).

    Returns
    -------
    numpy.ndarray
        float32, read-only.  A view of the raw channel when ``scale == 1``, else a
        new scaled array.  No unit conversion; see :func:`to_m_s2`.
    """
    x = recording.channel(sensor.channel)
    scale = float(sensor.scale)
    if not np.isfinite(scale) or scale == 0:
        raise GearbenchError(
            f"sensor {sensor.name!r} has scale {scale}; give the physical units per file value (non-zero)",
            field="sensors.scale",
        )
    if scale == 1.0:
        return x
    y = np.multiply(x, np.float32(scale), dtype=np.float32)
    y.setflags(write=False)
    return y


def to_m_s2(x, units: str) -> np.ndarray:
    """Convert an acceleration signal from ``units`` ("g" or "m/s2") to m/s^2.

    Uses the standard acceleration of gravity g_n = 9.80665 m/s^2 (exact).  Returns
    a new array of the same floating dtype (float32 stays float32).

    References
    ----------
    .. [1] BIPM, "The International System of Units (SI Brochure)", 9th ed., 2019;
       g_n fixed by the 3rd CGPM, 1901.
    """
    x = np.asarray(x)
    dtype = x.dtype if np.issubdtype(x.dtype, np.floating) else np.float64
    if units == "g":
        return np.multiply(x, dtype.type(G_N_M_S2), dtype=dtype)
    if units == "m/s2":
        return np.array(x, dtype=dtype, copy=True)
    raise GearbenchError(f"Invalid value for 'units': allowed 'g', 'm/s2', got {units!r}", field="sensors.units")


@dataclass(frozen=True)
class SignalQuality:
    """Quality facts of one signal.

    Attributes
    ----------
    n_nonfinite : int
        Number of NaN or infinite samples.
    clipped_fraction : float
        Fraction of samples that lie in runs of >= ``min_run`` consecutive samples at
        the signal's extreme value (or at full scale).
    clipped : bool
        At least one such run.
    flat : bool
        All finite samples equal (or no finite sample).
    peak : float
        Largest absolute finite value (signal units).
    rms : float
        RMS of the finite samples (signal units).
    n_samples : int
    full_scale : float or None
        The full scale used, if any.
    min_run : int
        Minimum run length counted as clipping.
    """

    n_nonfinite: int
    clipped_fraction: float
    clipped: bool
    flat: bool
    peak: float = float("nan")
    rms: float = float("nan")
    n_samples: int = 0
    full_scale: float | None = None
    min_run: int = MIN_CLIP_RUN

    def to_json_dict(self) -> dict:
        return {
            "n_samples": self.n_samples,
            "peak": self.peak,
            "rms": self.rms,
            "non_finite": self.n_nonfinite,
            "clipped": self.clipped,
            "clipped_fraction": self.clipped_fraction,
            "flat": self.flat,
        }


def _run_samples(mask: np.ndarray, min_run: int) -> int:
    """Number of True samples lying in runs of at least ``min_run`` consecutive Trues."""
    if not mask.any():
        return 0
    edges = np.diff(mask.view(np.int8), prepend=np.int8(0), append=np.int8(0))
    starts = np.flatnonzero(edges == 1)
    ends = np.flatnonzero(edges == -1)
    lengths = ends - starts
    return int(lengths[lengths >= min_run].sum())


def signal_quality(x, *, full_scale: float | None = None, min_run: int = MIN_CLIP_RUN) -> SignalQuality:
    """Detect non-finite samples, flat signals and clipping.

    A sample is at the rail when it equals the signal's largest or smallest finite
    value, or when ``|x| >= 0.999 * full_scale`` (``full_scale=1.0`` for the raw
    values of PCM files, which soundfile normalises to [-1, 1)).  Clipping is a run
    of at least ``min_run`` consecutive samples at the rail: a healthy signal with a
    continuous distribution meets its extreme value once.

    Parameters
    ----------
    x : array_like
        1-D signal.
    full_scale : float, optional
        Full-scale value of the converter in the units of ``x``.
    min_run : int
        Shortest run counted as clipping (default 3).

    Returns
    -------
    SignalQuality
    """
    x = np.asarray(x)
    if x.ndim != 1:
        raise GearbenchError(f"signal_quality needs a 1-D signal, got shape {x.shape}; pass one channel")
    n = x.size
    finite = np.isfinite(x)
    n_finite = int(np.count_nonzero(finite))
    n_nonfinite = n - n_finite
    if n_finite == 0:
        return SignalQuality(n_nonfinite, 0.0, False, True, n_samples=n, full_scale=full_scale, min_run=min_run)
    xf = x if n_nonfinite == 0 else x[finite]
    hi = float(xf.max())
    lo = float(xf.min())
    peak = max(abs(hi), abs(lo))
    sq = np.square(xf, dtype=np.float32 if xf.dtype == np.float32 else np.float64)
    rms = float(np.sqrt(np.mean(sq, dtype=np.float64)))
    del sq
    flat = hi == lo
    clipped_n = 0
    if not flat:
        # Extreme values; NaN compares False, so non-finite samples never count.
        at_rail = (x == hi) | (x == lo)
        if full_scale is not None:
            at_rail |= np.abs(x) >= 0.999 * float(full_scale)
        # Runs must stay on one rail: split high and low.
        high = at_rail & (x > 0.5 * (hi + lo))
        low = at_rail & ~high
        clipped_n = _run_samples(high, min_run) + _run_samples(low, min_run)
    return SignalQuality(
        n_nonfinite=n_nonfinite,
        clipped_fraction=clipped_n / n if n else 0.0,
        clipped=clipped_n > 0,
        flat=flat,
        peak=peak,
        rms=rms,
        n_samples=n,
        full_scale=full_scale,
        min_run=min_run,
    )
