"""``commission report --sign`` for a 150-item job with four charts, and a 1000-item report.

Timed in this process through the library entry point the command calls,
``commission.report.build.make(JobState(reg, job), form, sign=..., passphrase=...)``, each
run with a fresh ``JobState`` (as each command run has), after warm-up runs that import
everything and register the fonts:

* signed report against an unsigned report plus a bare pyHanko signature of that same
  unsigned PDF (``SimpleSigner.load`` from the identity's key and certificate files, PAdES,
  SHA-256, as ``commission.report.signing`` asks for, none of its checks);
* the unsigned 1000-item report against the unsigned 150-item one: linear growth is
  1000 / 150 = 6.7x, the target allows 8x.

The jobs are the shipped checklist with the demo's answers (which give the record its four
charts: clamp waveform, predicted harmonics, heating log, heatsink soak) padded with voltage
readings; see ``benchmarks/_jobs.py``.
"""

from __future__ import annotations

import dataclasses
import gc
import sys
from io import BytesIO

from ._common import (
    Context,
    Figure,
    checked,
    imports_beyond,
    median,
    profile_top,
    run_child,
    spread,
    stopwatch,
)
from ._jobs import PASSPHRASE, make_job, restore_home, use_home

PINT_PROBE = """\
import time
from commission.units import registry
t0 = time.perf_counter()
import pint
t1 = time.perf_counter()
registry()
t2 = time.perf_counter()
print(f"import pint {t1 - t0:.3f} s, then commission.units.registry() {t2 - t1:.3f} s")
"""
SIGN_TARGET = 1.2
GROWTH_TARGET = 8.0


def bare_sign(pdf: bytes, key_file, cert_file) -> bytes:
    """Sign with pyHanko directly: what any PAdES signature of this PDF costs."""
    from pyhanko.pdf_utils.incremental_writer import IncrementalPdfFileWriter
    from pyhanko.sign import signers
    from pyhanko.sign.fields import SigSeedSubFilter

    signer = signers.SimpleSigner.load(str(key_file), str(cert_file),
                                       key_passphrase=PASSPHRASE.encode("utf-8"))
    meta = signers.PdfSignatureMetadata(field_name="InstallerSignature", md_algorithm="sha256",
                                        subfilter=SigSeedSubFilter.PADES,
                                        reason="Commissioning record")
    writer = IncrementalPdfFileWriter(BytesIO(pdf))
    return signers.sign_pdf(writer, meta, signer=signer).getvalue()


def run(ctx: Context) -> list[Figure]:
    old_home = use_home(ctx.scratch / "home")
    try:
        return _run(ctx)
    finally:
        restore_home(old_home)


def _run(ctx: Context) -> list[Figure]:
    from commission.register import Register
    from commission.report import identity
    from commission.report.build import make
    from commission.report.pdf import load_form
    from commission.resources import resolve
    from commission.walk.state import JobState

    if not identity.exists():
        identity.create_identity("Bench Installer", "REG-00150", passphrase=PASSPHRASE)
    ident = identity.load_identity()
    form = load_form(resolve("forms", "handover"))
    big_n = 1000
    with stopwatch() as setup:
        small = make_job(ctx.scratch / "report-150", 150)
        big = make_job(ctx.scratch / "report-1000", big_n)
    ctx.say(f"made a 150-item and a {big_n}-item job in {setup[0]:.1f} s")

    with Register(small.register) as reg_s, Register(big.register) as reg_b:
        job_s, job_b = reg_s.find_job(small.short_id), reg_b.find_job(big.short_id)

        def report(reg, job, sign):
            state = JobState(reg, job)
            made = make(state, form, sign=sign, passphrase=PASSPHRASE if sign else None)
            state.files.close()
            return made

        charts = _count_charts(lambda: report(reg_s, job_s, False))
        signed = report(reg_s, job_s, True)  # warm: the signing imports
        bare_sign(report(reg_s, job_s, False).pdf, ident.key_file, ident.cert_file)
        report(reg_b, job_b, False)
        checked = _verify(signed.pdf)

        n = 3 if ctx.quick else 9
        t_signed, t_unsigned, t_bare, t_big = [], [], [], []
        for k in range(n):
            # alternate the order, and start each from a clean heap, so neither side
            # pays more often for the other's garbage
            for which in (("signed", "unsigned") if k % 2 == 0 else ("unsigned", "signed")):
                gc.collect()
                with stopwatch() as t:
                    made = report(reg_s, job_s, which == "signed")
                if which == "signed":
                    t_signed += t
                else:
                    t_unsigned += t
                    pdf = made.pdf
            gc.collect()
            with stopwatch() as t:
                bare_sign(pdf, ident.key_file, ident.cert_file)
            t_bare += t
        for _ in range(2 if ctx.quick else 3):
            with stopwatch() as t:
                made_big = report(reg_b, job_b, False)
            t_big += t
        base = median(t_unsigned) + median(t_bare)
        sign_fig = Figure("report --sign, 150 items, 4 charts", median(t_signed), base, "s",
                          SIGN_TARGET, baseline_name="unsigned report + bare pyHanko sign")
        sign_fig.detail += [
            f"signed:   {spread(t_signed)}; {len(signed.pdf) / 1e3:.0f} kB, status "
            f"{signed.status}, charts drawn: {charts}; {checked}",
            f"unsigned: {spread(t_unsigned)}",
            f"bare pyHanko signature: {spread(t_bare)}",
            f"ratio of the best runs {min(t_signed) / (min(t_unsigned) + min(t_bare)):.2f}x",
            _sign_alone(pdf, ident, 10 if ctx.quick else 30),
        ]
        if sign_fig.met is False:
            sign_fig.detail += profile_top(lambda: report(reg_s, job_s, True), n=10)
        growth = Figure(f"report, {big_n} items vs 150", median(t_big), median(t_unsigned),
                        "s", GROWTH_TARGET, baseline_name="same report, 150 items")
        growth.detail += [
            f"{big_n} items: {spread(t_big)}; {len(made_big.pdf) / 1e3:.0f} kB",
            f"linear would be {big_n / 150:.2f}x (the target allows {GROWTH_TARGET:g}x); "
            f"ratio of the best runs {min(t_big) / min(t_unsigned):.2f}x",
        ]
        if growth.met is False:
            growth.detail += profile_top(lambda: report(reg_b, job_b, False), n=10,
                                         sort="cumtime")
    cli = _cli_figure(ctx, small, median(t_signed))
    return [sign_fig, cli, growth]


def _cli_figure(ctx: Context, job, library_s: float) -> Figure:
    """The command itself, as a child process, against the library call it makes."""
    passphrase = ctx.scratch / "passphrase.txt"
    passphrase.write_text(PASSPHRASE + "\n", encoding="utf-8")
    passphrase.chmod(0o600)
    env = ctx.child_env()
    times = []
    for k in range(1 + (2 if ctx.quick else 3)):
        out = ctx.scratch / f"record-cli-{k}.pdf"
        child = checked(run_child([*ctx.cli, "report", job.short_id, "--out", str(out),
                                   "--sign", "--passphrase-file", str(passphrase),
                                   "--register", str(job.register)], env=env),
                        "commission report --sign")
        if k:  # the first run warms the bytecode and file caches
            times.append(child.seconds)
    fig = Figure("  commission report --sign (CLI), 150 items", median(times), library_s, "s",
                 None, None, baseline_name="the library call, in-process")
    fig.detail.append(f"command: {spread(times)}; the difference is Python start-up, "
                      "imports and pint's unit registry")
    argv = [*ctx.cli, "report", job.short_id, "--out", str(ctx.scratch / "record-cli-x.pdf"),
            "--sign", "--passphrase-file", str(passphrase), "--register", str(job.register)]
    fig.detail += imports_beyond(argv, [sys.executable, "-c", "pass"], env, n=0)
    pint = checked(run_child([sys.executable, "-c", PINT_PROBE], env=env), "pint probe")
    fig.detail.append(f"in a fresh process: {pint.out.strip()}")
    return fig


def _sign_alone(pdf: bytes, ident, n: int) -> str:
    """commission's sign_pdf against the bare pyHanko signature, same PDF, interleaved:
    the part of the signed report that is signing, without the report's own noise."""
    from commission.report.signing import sign_pdf

    ours, bare = [], []
    for _ in range(n):
        with stopwatch() as t:
            sign_pdf(pdf, passphrase=PASSPHRASE, reason="Commissioning record", location=None,
                     field_name="InstallerSignature")
        ours += t
        with stopwatch() as t:
            bare_sign(pdf, ident.key_file, ident.cert_file)
        bare += t
    return (f"signing alone: commission.report.signing.sign_pdf {median(ours) * 1e3:.1f} ms, "
            f"bare pyHanko {median(bare) * 1e3:.1f} ms (medians of {n}, same PDF): "
            f"{median(ours) / median(bare):.2f}x")


def _count_charts(run_once) -> int:
    """How many charts the record draws (wraps the chart builder for one run)."""
    from commission.report import chartdata

    seen: list[int] = []
    original = chartdata.chart_flowables

    def counting(c):
        out = original(c)
        seen.append(len(out))
        return out

    chartdata.chart_flowables = counting
    try:
        run_once()
    finally:
        chartdata.chart_flowables = original
    return seen[-1] if seen else 0


def _verify(pdf: bytes) -> str:
    from commission.report.verify import verify

    result = verify(pdf)
    # The benchmark's throw-away signer is in no trust store: every other part must hold.
    trusting = dataclasses.replace(result, trusted=True)
    if trusting.ok():
        return "verifies" if result.trusted else "verifies (signer not in a trust store)"
    return f"does NOT verify: {trusting.first_problem()}"
