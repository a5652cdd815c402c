"""Reading instrument files into arrays, with one-line errors a person can act on.

* waveform captures: CSV (:func:`read_capture_csv`) and two-channel PCM WAV
  (:func:`read_capture_wav`, or :func:`open_capture_wav` to read an hour-long file in chunks);
* logs: heating and heatsink-soak temperature logs (:func:`read_heating_log`,
  :func:`read_soak_log`) and grid-power logs of regulation (:func:`read_regulation_log`).

Every reader raises :class:`CaptureError` for a file it cannot use; the message is one line
naming the file, the line or column, and what would be accepted. Non-fatal findings, such as
converter readings at the rails, come back as warnings on the result.
"""

from __future__ import annotations

from commission.lazy import exports


class CaptureError(Exception):
    """A file the user gave cannot be read as a capture or log; the message says why."""

    def __init__(self, message: str):
        super().__init__(message)
        self.message = message


# Each reader is imported when first named (PEP 562), so reading one kind of file loads only
# that reader.
_LAZY = {
    "WaveformCapture": "csv_capture", "read_capture_csv": "csv_capture",
    "GridPowerLog": "logs", "TemperatureLog": "logs", "read_heating_log": "logs",
    "read_regulation_log": "logs", "read_soak_log": "logs",
    "WavCaptureStream": "wav_capture", "open_capture_wav": "wav_capture",
    "read_capture_wav": "wav_capture",
}


__getattr__ = exports(__name__, _LAZY)

__all__ = [
    "CaptureError",
    "GridPowerLog",
    "TemperatureLog",
    "WaveformCapture",
    "WavCaptureStream",
    "open_capture_wav",
    "read_capture_csv",
    "read_capture_wav",
    "read_heating_log",
    "read_regulation_log",
    "read_soak_log",
]
