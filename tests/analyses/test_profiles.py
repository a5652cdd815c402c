"""Export profiles: saved once per instrument, used by `analyse --instrument`, by a file
item taken with that instrument, and carried in the record so `verify` reads the file the
same way.

References: the values as written (closed-form sines and straight rises), the record read
back with pdfdetach (poppler, outside the project).
"""

from __future__ import annotations

import json
import math
import subprocess
import wave

import numpy as np

from conftest import need_tool


def _add(cli, serial):
    assert cli("instruments", "add", "--serial", serial, "--make", "K", "--model", "M",
               "--calibration-due", "2099-12-31").exit_code == 0


def test_profile_is_saved_shown_and_checked(cli):
    """Bad values are one line each (exit 2); a good profile is stored and shown."""
    _add(cli, "LOG-1")
    for args, words in ((["--tz", "Mars/Olympus"], "time zone"),
                        (["--columns", "temperature=T1"], "keys are"),
                        (["--time-format", "dd.mm.yyyy"], "strptime"),
                        (["--v-scale", "0"], "above zero")):
        result = cli("instruments", "profile", "LOG-1", *args)
        assert result.exit_code == 2 and words in result.stderr
        assert len(result.stderr.strip().splitlines()) == 1
    made = cli("instruments", "profile", "LOG-1", "--columns", "temp_c=T1,time_s=Zeit",
               "--tz", "Europe/Berlin", "--json")
    assert made.exit_code == 0, made.stderr
    assert json.loads(made.stdout)["profile"] == {
        "columns": {"temp_c": "T1", "time_s": "Zeit"}, "tz": "Europe/Berlin"}
    assert "Europe/Berlin" in cli("instruments", "profile", "LOG-1").stdout
    unknown = cli("analyse", "heating", "x.csv", "--volume-l", "150", "--power-w", "3000",
                  "--instrument", "NOPE")
    assert unknown.exit_code == 2 and "not registered" in unknown.stderr


def test_analyse_with_an_instruments_profile(cli, tmp_path):
    """A logger that writes 'Zeit' and 'T1': refused as it is (the columns named), read with
    --instrument and its saved profile, to the slope written (0.3 K/min = 18 K/h)."""
    _add(cli, "LOG-2")
    log = tmp_path / "log.csv"
    log.write_text("Zeit,T1\n" + "".join(f"{k * 60},{30 + 0.3 * k:.2f}\n" for k in range(60)))
    plain = cli("analyse", "heating", log, "--volume-l", "150", "--power-w", "3000")
    assert plain.exit_code == 2 and "'Zeit', 'T1'" in plain.stderr
    assert cli("instruments", "profile", "LOG-2", "--columns",
               "temp_c=T1,time_s=Zeit").exit_code == 0
    got = cli("analyse", "heating", log, "--volume-l", "150", "--power-w", "3000",
              "--instrument", "LOG-2", "--json")
    assert got.exit_code == 0, got.stderr
    data = json.loads(got.stdout)
    assert abs(data["rate_k_per_h"] - 18.0) < 1e-6
    assert data["read_with"] == {"columns": {"temp_c": "T1", "time_s": "Zeit"}}


def test_wav_scales_kept_in_the_profile(cli, tmp_path):
    """A two-channel WAV read with the full-scale values of the front end's profile: the
    RMS values are those of the sines written (0.5 and 0.3 of full scale)."""
    _add(cli, "FE-9")
    rate, n = 8000, 8000
    th = 2 * np.pi * 50 * np.arange(n) / rate
    data = np.column_stack([0.5 * np.sin(th), 0.3 * np.sin(th)])
    path = tmp_path / "cap.wav"
    with wave.open(str(path), "wb") as w:
        w.setnchannels(2)
        w.setsampwidth(2)
        w.setframerate(rate)
        w.writeframes(np.round(data * 32767).astype("<i2").tobytes())
    assert cli("instruments", "profile", "FE-9", "--v-scale", "500", "--i-scale",
               "50").exit_code == 0
    got = cli("analyse", "capture", path, "--instrument", "FE-9", "--state", "full", "--json")
    assert got.exit_code == 0, got.stderr
    out = json.loads(got.stdout)
    assert abs(out["v_rms"] - 0.5 * 500 / math.sqrt(2)) < 0.05
    assert abs(out["i_rms"] - 0.3 * 50 / math.sqrt(2)) < 0.01
    assert out["verdict"] == "pass"


def test_profile_travels_with_the_entry_into_the_record(cli, new_job, tmp_path):
    """A heating log answered with an instrument whose profile maps its columns: the entry
    keeps the profile, the record embeds it (read back with pdfdetach), the check reads the
    file with it, and verify re-derives the same verdict from the record."""
    _add(cli, "LOG-3")
    assert cli("instruments", "profile", "LOG-3", "--columns",
               "temp_c=T1,time_s=Zeit").exit_code == 0
    log = tmp_path / "log.csv"
    log.write_text("Zeit,T1\n" + "".join(f"{k * 60},{30 + 0.3 * k:.2f}\n" for k in range(60)))
    job = new_job()
    answers = tmp_path / "a.yaml"
    answers.write_text("install.cylinder.volume: 150 L\nelement.rated_power: 3 kW\n"
                       f"water.heat.log: {{file: {log}, instrument: LOG-3}}\n")
    assert cli("walk", job, "--answers", answers).exit_code == 0
    shown = json.loads(cli("show", job, "--json").stdout)
    item = next(i for i in shown["items"] if i["id"] == "water.heat.log")
    assert "could not decide" not in item["reason"] and "K/h" in item["reason"]
    need_tool("pdfdetach")
    pdf = tmp_path / "r.pdf"
    assert cli("report", job, "--out", pdf).exit_code == 0
    out = tmp_path / "rec.json"
    subprocess.run(["pdfdetach", "-savefile", "commission-record.json", "-o", str(out),
                    str(pdf)], check=True, capture_output=True)
    record = json.loads(out.read_text(encoding="utf-8"))
    entry = next(e for e in record["entries"] if e["item"] == "water.heat.log")
    assert entry["read_with"] == {"columns": {"temp_c": "T1", "time_s": "Zeit"}}
    # unsigned, so `verify` stops at the signature and reads nothing of the record; read
    # anyway (as import --unverified does), every verdict re-derived from the record (the
    # log read with the profile it carries) matches the one printed
    data = json.loads(cli("verify", pdf, "--json").stdout)
    assert data["signed"] is False and data["record_embedded"] is False
    from commission.report.verify import verify

    result = verify(pdf, read_anyway=True)
    assert result.verdicts_match is True and result.mismatches == []
    assert "water.heat.log" not in result.not_reevaluable
