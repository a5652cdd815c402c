"""Waveform captures in WAV: PCM, two (or more) channels from a data logger or an isolated
measurement front end.

Samples are fractions of full scale (-1...1); ``voltage_full_scale_v`` and
``current_full_scale_a`` give the volts and amperes at full scale. Channel 1 is voltage and
channel 2 current unless told otherwise (1-based, as printed on loggers). 8-, 16-, 24- and
32-bit integer PCM are read; floating-point WAV is not (the standard ``wave`` module cannot
open it).

An AC-coupled (audio) input shifts the phase at mains frequency, which spoils the angle
between voltage and current; mains must never be connected to an audio input -- only an
isolated measurement front end with its own rated inputs.
"""

from __future__ import annotations

import os
import struct
import wave
from collections.abc import Iterator

import numpy as np

from commission.captures import CaptureError
from commission.captures.csv_capture import WaveformCapture, check_two_cycles

_DEFAULT_CHUNK_FRAMES = 1 << 16
_HEAD_S = 0.5  # stretch used to find the mains frequency for the two-cycle check


class WavCaptureStream:
    """A WAV capture read in chunks, for long files in bounded memory.

    Iterating yields ``(voltage_v, current_a)`` arrays of up to ``chunk_frames`` samples,
    ready for :class:`commission.physics.waveform.CaptureAccumulator`. The checks that need
    the whole file (no current at all) run when the last chunk has been read; ``warnings``
    is complete after the iteration.

    Attributes
    ----------
    source : str
        File name.
    sample_rate_hz : float
        Sampling rate [Hz].
    frames : int
        Samples per channel in the file [1].
    channels : int
        Channels in the file [1].
    sample_width_bytes : int
        Bytes per sample [1].
    """

    def __init__(self, path, *, voltage_full_scale_v, current_full_scale_a,
                 voltage_channel=1, current_channel=2, chunk_frames=_DEFAULT_CHUNK_FRAMES,
                 name=None):
        self.source = name or os.fspath(path)
        self._path = os.fspath(path)
        if not (voltage_full_scale_v and current_full_scale_a):
            raise CaptureError(f"{self.source}: full-scale values must be non-zero (volts and "
                               "amperes at full scale)")
        if int(chunk_frames) < 1:
            raise CaptureError("chunk_frames must be at least 1")
        self._v_scale = float(voltage_full_scale_v)
        self._i_scale = float(current_full_scale_a)
        self._chunk = int(chunk_frames)
        self._warn: list[str] = []
        with _open(self._path, self.source) as w:
            self.channels = w.getnchannels()
            self.sample_width_bytes = w.getsampwidth()
            self.sample_rate_hz = float(w.getframerate())
            self.frames = w.getnframes()
        if self.frames == 0:
            raise CaptureError(f"{self.source}: the WAV file holds no samples")
        for label, ch in (("voltage", voltage_channel), ("current", current_channel)):
            if int(ch) != ch or not 1 <= ch <= self.channels:
                raise CaptureError(
                    f"{self.source}: {label} channel {ch!r} does not exist; the file has "
                    f"{self.channels} channel(s), numbered from 1"
                )
        if self.channels < 2 or voltage_channel == current_channel:
            raise CaptureError(
                f"{self.source}: has {self.channels} channel(s); a capture needs voltage and "
                "current on two different channels (channel 1 voltage, 2 current by default)"
            )
        if self.sample_width_bytes not in (1, 2, 3, 4):
            raise CaptureError(f"{self.source}: {8 * self.sample_width_bytes}-bit samples are "
                               "not supported; use 8-, 16-, 24- or 32-bit PCM")
        self._v_ch = int(voltage_channel) - 1
        self._i_ch = int(current_channel) - 1

    @property
    def duration_s(self):
        """Length of the capture [s]."""
        return self.frames / self.sample_rate_hz

    @property
    def warnings(self):
        """Non-fatal findings so far (clipped readings), as a tuple of one-line strings."""
        return tuple(self._warn)

    def __iter__(self) -> Iterator[tuple[np.ndarray, np.ndarray]]:
        self._warn.clear()
        at_rail = {"voltage": 0, "current": 0}
        any_current = False
        any_voltage = False
        checked = False
        head: list[np.ndarray] = []
        head_got = 0
        head_n = max(8, int(_HEAD_S * self.sample_rate_hz))
        with _open(self._path, self.source) as w:
            remaining = self.frames
            while remaining > 0:
                raw = w.readframes(min(self._chunk, remaining))
                frame = self.channels * self.sample_width_bytes
                got = len(raw) // frame
                raw = raw[: got * frame]  # a file cut partway through a frame
                if got == 0:
                    raise CaptureError(
                        f"{self.source}: the file ends after {self.frames - remaining} of its "
                        f"{self.frames} frames (truncated)"
                    )
                remaining -= got
                codes, full = _decode(raw, self.sample_width_bytes, self.channels)
                v_codes = codes[:, self._v_ch]
                i_codes = codes[:, self._i_ch]
                for name, c in (("voltage", v_codes), ("current", i_codes)):
                    at_rail[name] += int(np.count_nonzero((c <= -full) | (c >= full - 1)))
                v = v_codes * (self._v_scale / full)
                i = i_codes * (self._i_scale / full)
                any_voltage = any_voltage or bool(np.any(v))
                any_current = any_current or bool(np.any(i))
                if not checked:
                    head.append(v)
                    head_got += v.size
                    if head_got >= min(head_n, self.frames):
                        checked = True
                        first = np.concatenate(head)[:head_n]
                        head = []
                        if np.any(first):
                            check_two_cycles(self.source, self.sample_rate_hz, first,
                                             self.frames)
                yield v, i
        if not any_voltage:
            raise CaptureError(f"{self.source}: the voltage channel is zero throughout: no "
                               "voltage was captured; check the channel assignment")
        if not any_current:
            raise CaptureError(f"{self.source}: the current channel is zero throughout: no "
                               "current was captured; check the clamp and the channel")
        for name, count in at_rail.items():
            if count:
                self._warn.append(
                    f"{self.source}: {count} {name} samples sit at the converter's full scale: "
                    "the reading is probably clipped, so peaks, RMS and harmonics read low; "
                    "reduce the gain or use a larger range"
                )


def _open(path, source=None):
    source = source or path
    try:
        return wave.open(path, "rb")
    except FileNotFoundError:
        raise CaptureError(f"{source}: no such file") from None
    except IsADirectoryError:
        raise CaptureError(f"{source}: is a directory, not a WAV file") from None
    except (wave.Error, EOFError, RuntimeError, struct.error) as exc:
        # RuntimeError and struct.error: the wave module on a chunk size that lies
        detail = str(exc) or "truncated or damaged header"
        hint = ""
        if detail.endswith("unknown format: 3"):
            hint = "; floating-point WAV is not supported, export 16- or 24-bit integer PCM"
        elif detail.endswith("unknown format: 65534"):
            hint = ("; this extensible-format WAV needs Python 3.12 or newer to read, or "
                    "export it as plain 16- or 24-bit PCM")
        raise CaptureError(f"{source}: not a readable PCM WAV file ({detail}){hint}") from None
    except OSError as exc:
        raise CaptureError(f"{source}: cannot be read ({exc.strerror})") from None


def _decode(raw, width, channels):
    """Integer codes as float array (frames, channels) and the full-scale code."""
    if width == 1:
        codes = np.frombuffer(raw, dtype=np.uint8).astype(float) - 128.0
        full = 128.0
    elif width == 2:
        codes = np.frombuffer(raw, dtype="<i2").astype(float)
        full = 32768.0
    elif width == 3:
        b = np.frombuffer(raw, dtype=np.uint8).reshape(-1, 3).astype(np.int32)
        value = b[:, 0] | (b[:, 1] << 8) | (b[:, 2] << 16)
        value = np.where(value >= 1 << 23, value - (1 << 24), value)
        codes = value.astype(float)
        full = float(1 << 23)
    else:
        codes = np.frombuffer(raw, dtype="<i4").astype(float)
        full = float(1 << 31)
    return codes.reshape(-1, channels), full


def open_capture_wav(path, *, voltage_full_scale_v, current_full_scale_a, voltage_channel=1,
                     current_channel=2, chunk_frames=_DEFAULT_CHUNK_FRAMES, name=None):
    """Open a WAV capture for reading in chunks (``name``: the file's name for messages).

    Parameters
    ----------
    path : str or os.PathLike
        WAV file (integer PCM).
    voltage_full_scale_v : float
        Voltage at full scale [V].
    current_full_scale_a : float
        Current at full scale [A].
    voltage_channel, current_channel : int, default 1 and 2
        Channels, numbered from 1.
    chunk_frames : int, default 65536
        Samples per chunk [1].

    Returns
    -------
    WavCaptureStream
    """
    return WavCaptureStream(path, voltage_full_scale_v=voltage_full_scale_v,
                            current_full_scale_a=current_full_scale_a,
                            voltage_channel=voltage_channel, current_channel=current_channel,
                            chunk_frames=chunk_frames, name=name)


def read_capture_wav(path, *, voltage_full_scale_v, current_full_scale_a, voltage_channel=1,
                     current_channel=2, name=None):
    """Read a whole WAV capture into memory (``name``: the file's name for messages).

    Parameters
    ----------
    path : str or os.PathLike
        WAV file (integer PCM).
    voltage_full_scale_v : float
        Voltage at full scale [V].
    current_full_scale_a : float
        Current at full scale [A].
    voltage_channel, current_channel : int, default 1 and 2
        Channels, numbered from 1.

    Returns
    -------
    WaveformCapture

    Raises
    ------
    CaptureError
        Not a PCM WAV file, missing channel, no voltage or current, fewer than two cycles.
    """
    stream = WavCaptureStream(path, voltage_full_scale_v=voltage_full_scale_v,
                              current_full_scale_a=current_full_scale_a,
                              voltage_channel=voltage_channel, current_channel=current_channel,
                              chunk_frames=max(1, _frames_hint(path, name)), name=name)
    parts = list(stream)  # the stream checks voltage, current and the two cycles
    voltage = np.concatenate([p[0] for p in parts])
    current = np.concatenate([p[1] for p in parts])
    return WaveformCapture(stream.source, stream.sample_rate_hz, 0.0, voltage, current,
                           stream.warnings)


def _frames_hint(path, name=None):
    with _open(os.fspath(path), name) as w:
        return w.getnframes()


def read_voltage_wav(path, *, voltage_full_scale_v, channel=1):
    """Read one voltage channel of a PCM WAV file (mono or multichannel) into memory.

    Parameters
    ----------
    path : str or os.PathLike
        WAV file (integer PCM).
    voltage_full_scale_v : float
        Voltage at full scale [V].
    channel : int, default 1
        Channel holding the voltage, numbered from 1.

    Returns
    -------
    (float, numpy.ndarray, tuple of str)
        Sample rate [Hz], voltage [V], warnings (clipping).
    """
    source = os.fspath(path)
    if not voltage_full_scale_v:
        raise CaptureError(f"{source}: the voltage at full scale must be non-zero")
    with _open(source) as w:
        channels, width = w.getnchannels(), w.getsampwidth()
        rate, frames = float(w.getframerate()), w.getnframes()
        if int(channel) != channel or not 1 <= channel <= channels:
            raise CaptureError(f"{source}: voltage channel {channel!r} does not exist; the file "
                               f"has {channels} channel(s), numbered from 1")
        if width not in (1, 2, 3, 4):
            raise CaptureError(f"{source}: {8 * width}-bit samples are not supported; use 8-, "
                               "16-, 24- or 32-bit PCM")
        if frames == 0:
            raise CaptureError(f"{source}: the WAV file holds no samples")
        parts, got_total = [], 0
        while got_total < frames:
            raw = w.readframes(min(_DEFAULT_CHUNK_FRAMES, frames - got_total))
            got = len(raw) // (channels * width)
            if got == 0:
                raise CaptureError(f"{source}: the file ends after {got_total} of its {frames} "
                                   "frames (truncated)")
            codes, full = _decode(raw[: got * channels * width], width, channels)
            parts.append(codes[:, int(channel) - 1] * (float(voltage_full_scale_v) / full))
            got_total += got
    voltage = np.concatenate(parts)
    warnings = []
    rail = int(np.count_nonzero(np.abs(voltage) >= abs(voltage_full_scale_v) * (1 - 1 / full)))
    if rail:
        warnings.append(f"{source}: {rail} voltage samples sit at the converter's full scale: "
                        "the reading is probably clipped; use a larger range")
    return rate, voltage, tuple(warnings)
