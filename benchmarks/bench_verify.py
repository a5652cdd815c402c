"""``commission verify`` on 200 MB hostile files: peak memory and time.

A signed record of the demo job is made once (``commission demo``). Four hostile files
of about 200 MB are made from it:

* ``appended``: 200 MB of random bytes after the signed file's end;
* ``attachment``: an incremental update after the signature that embeds a 200 MB
  uncompressed file (the attachment a forger adds);
* ``re-signed``: the same update, then signed by the demo key in a new revision (so the
  200 MB object sits inside a later signature's signed range);
* ``signed inside``: the record as ``report --sign`` makes it with a 200 MB attachment
  added before the (trusted) installer signs (inside the first signed revision).

Each is verified by ``commission verify FILE --trust CERT`` in a child process whose own
peak resident set comes from ``os.wait4``; the baseline is the same command on the honest
record, in the same run. Every hostile file must be refused (exit 1), with the reason
printed. The target is a peak under 300 MB and an end within seconds.

    python benchmarks/bench_verify.py          # or: python benchmarks/run.py --only verify
"""

from __future__ import annotations

import io
import os
import sys
from pathlib import Path

if __package__ in (None, ""):  # run as a script
    sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
    __package__ = "benchmarks"

from ._common import Context, Figure, checked, run_child, stopwatch  # noqa: E402

LIMIT_MB = 300.0
SIZE = 200 * 1024 * 1024


def _demo(ctx: Context) -> tuple[Path, Path, Path, str, str]:
    import re

    folder = ctx.scratch / "verify-demo"
    env = ctx.child_env()
    done = checked(run_child([*ctx.cli, "demo", "--out", str(folder)], env=env), "demo")
    record = next(folder.glob("record-*.pdf"))
    passphrase = (folder / "demo-passphrase.txt").read_text(encoding="utf-8").strip()
    job = re.search(r"demo job (\w+)", done.out).group(1)
    return folder, record, folder / "identity" / "cert.pem", passphrase, job


def _random_chunk() -> bytes:
    return os.urandom(1 << 20)


def make_appended(record: Path, out: Path) -> None:
    chunk = _random_chunk()
    with out.open("wb") as fh:
        fh.write(record.read_bytes())
        for _ in range(SIZE // len(chunk)):
            fh.write(chunk)


def make_attachment(record: Path, out: Path) -> None:
    from pyhanko.pdf_utils import embed
    from pyhanko.pdf_utils.incremental_writer import IncrementalPdfFileWriter

    writer = IncrementalPdfFileWriter(io.BytesIO(record.read_bytes()))
    blob = _random_chunk() * (SIZE // (1 << 20))
    data = embed.EmbeddedFileObject.from_file_data(writer, data=blob, compress=False)
    embed.embed_file(writer, embed.FileSpec(file_spec_string="extra.bin",
                                            file_name="extra.bin", embedded_data=data))
    del blob
    with out.open("wb") as fh:
        writer.write(fh)


def make_resigned(attached: Path, out: Path, home: Path, passphrase: str) -> None:
    os.environ["COMMISSION_HOME"] = str(home)
    from commission.report.signing import sign_pdf

    signed = sign_pdf(attached.read_bytes(), passphrase=passphrase, reason="forged",
                      location=None, field_name="Later")
    out.write_bytes(signed)


def make_signed_inside(home: Path, job: str, out: Path, passphrase: str) -> None:
    """The record as `report --sign` makes it, with a 200 MB attachment added before the
    (trusted) installer signs: the large object is inside the signed revision."""
    os.environ["COMMISSION_HOME"] = str(home)
    from pyhanko.pdf_utils import embed
    from pyhanko.pdf_utils.incremental_writer import IncrementalPdfFileWriter

    from commission.register import Register
    from commission.report import build, pdf, signing
    from commission.resources import resolve
    from commission.walk.state import JobState

    original = signing.sign_pdf

    def with_attachment(doc: bytes, **kw):
        writer = IncrementalPdfFileWriter(io.BytesIO(doc))
        blob = _random_chunk() * (SIZE // (1 << 20))
        data = embed.EmbeddedFileObject.from_file_data(writer, data=blob, compress=False)
        embed.embed_file(writer, embed.FileSpec(file_spec_string="f" * 64, file_name="big.bin",
                                                embedded_data=data))
        buf = io.BytesIO()
        writer.write(buf)
        return original(buf.getvalue(), **kw)

    signing.sign_pdf = with_attachment
    try:
        with Register(home / "register.sqlite3", create=False) as reg:
            state = JobState(reg, reg.find_job(job))
            made = build.make(state, pdf.load_form(resolve("forms", "handover")), sign=True,
                              passphrase=passphrase)
            state.files.close()
    finally:
        signing.sign_pdf = original
    out.write_bytes(made.pdf)


def run(ctx: Context) -> list[Figure]:
    with stopwatch() as made:
        folder, record, cert, passphrase, job = _demo(ctx)
        files = {"appended": ctx.scratch / "hostile-appended.pdf",
                 "attachment": ctx.scratch / "hostile-attachment.pdf",
                 "re-signed": ctx.scratch / "hostile-resigned.pdf",
                 "signed inside": ctx.scratch / "hostile-signed-inside.pdf"}
        make_appended(record, files["appended"])
        make_attachment(record, files["attachment"])
        saved = os.environ.get("COMMISSION_HOME")
        try:
            make_resigned(files["attachment"], files["re-signed"], folder, passphrase)
            make_signed_inside(folder, job, files["signed inside"], passphrase)
        finally:
            if saved is None:
                os.environ.pop("COMMISSION_HOME", None)
            else:
                os.environ["COMMISSION_HOME"] = saved
    ctx.say(f"made the demo record and 4 hostile files in {made[0]:.0f} s")
    env = ctx.child_env()
    argv = [*ctx.cli, "verify", "--trust", str(cert)]
    checked(run_child([*argv, str(record)], env=env), "verify honest record")  # warm caches
    base = checked(run_child([*argv, str(record)], env=env, measure_rss=True),
                   "verify honest record")
    figures = []
    for name, path in files.items():
        child = run_child([*argv, str(path)], env=env, measure_rss=True)
        size = path.stat().st_size / 1e6
        reason = (child.err.strip().splitlines() or ["(nothing on stderr)"])[-1]
        mem = Figure(f"verify {name} ({size:.0f} MB): peak RSS", child.max_rss_mb or 0.0,
                     base.max_rss_mb or 0.0, "MB", LIMIT_MB, "measured",
                     baseline_name=f"honest record ({record.stat().st_size / 1e6:.1f} MB)")
        mem.detail.append(f"exit {child.code} (1 expected): {reason[:150]}")
        speed = Figure(f"verify {name}: time", child.seconds, base.seconds, "s", None, None,
                       baseline_name="honest record")
        figures += [mem, speed]
    return figures


if __name__ == "__main__":
    import shutil
    import tempfile

    from ._common import text_table

    scratch = Path(tempfile.mkdtemp(prefix="commission-bench-verify-"))
    try:
        figs = run(Context(scratch=scratch, quick=False, say=print))
        for f in figs:
            for line in f.detail:
                print(f"{f.name}: {line}")
        print(text_table(figs))
    finally:
        shutil.rmtree(scratch, ignore_errors=True)
