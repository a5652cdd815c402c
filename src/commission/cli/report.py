"""commission report | verify | import | blank"""

from pathlib import Path
from typing import Annotated

import typer

from .common import JsonOpt, RegisterOpt, emit_json, open_register


def _write(out: Path, data: bytes) -> None:
    from ..errors import UserError

    try:
        out.parent.mkdir(parents=True, exist_ok=True)
        tmp = out.with_name(out.name + ".part")
        tmp.write_bytes(data)
        tmp.replace(out)
    except OSError as exc:
        raise UserError(f"{out}: cannot write ({exc.strerror})") from None


def _is_signed_pdf(path: Path) -> bool:
    """A PDF holding a signature dictionary (its signed byte range): cheap, no parsing."""
    try:
        with path.open("rb") as handle:
            return b"/ByteRange" in handle.read()
    except OSError:
        return False


def _check_out(out: Path, force: bool, sign: bool) -> Path | None:
    """Refuse to replace an existing file without --force. With --force, a signed record
    replaced by an unsigned one is first kept beside it under a dated name (returned)."""
    from ..errors import UserError

    if out.is_dir():
        raise UserError(f"{out}: is a folder; --out needs a file name")
    if not out.exists():
        return None
    signed = _is_signed_pdf(out)
    what = "a signed record" if signed else "a file"
    if not force:
        raise UserError(f"{out}: {what} already exists; give --force to replace it, or "
                        "choose another --out")
    if signed and not sign:
        from datetime import datetime

        stamp = datetime.now().strftime("%Y%m%dT%H%M%S")
        kept = out.with_name(f"{out.stem}.signed-{stamp}{out.suffix}")
        try:
            out.replace(kept)
        except OSError as exc:
            raise UserError(f"{out}: cannot keep the signed record aside ({exc.strerror}); "
                            "nothing written") from None
        return kept
    return None


def report(
    job: Annotated[str, typer.Argument(help="Job id or UUID.")],
    out: Annotated[Path, typer.Option(help="The PDF to write.")],
    sign: Annotated[bool, typer.Option(help="Sign with your identity (PAdES).")] = False,
    force: Annotated[bool, typer.Option(
        "--force", help="Replace an existing --out file (a signed one is kept aside when "
        "the new record is unsigned).")] = False,
    form: Annotated[str, typer.Option(help="Form file or shipped name.")] = "handover",
    passphrase_file: Annotated[
        Path | None, typer.Option(help="File holding the key passphrase (for scripts).")
    ] = None,
    homeowner_only: Annotated[
        bool, typer.Option(help="Only the homeowner's pages, in the job's language: an "
                           "unsigned extract naming the signed record given by --record.")
    ] = False,
    record: Annotated[
        Path | None, typer.Option(help="The signed record the homeowner extract names.")
    ] = None,
    register: RegisterOpt = None,
) -> None:
    """Write the handover record: results, charts, cautions, homeowner page, signatures."""
    from ..errors import UserError
    from ..job import JobState
    from ..report.build import make
    from ..report.pdf import load_form
    from ..resources import resolve

    form_data = load_form(resolve("forms", form))
    if out.exists() and not force:
        _check_out(out, force, sign)  # refuses before any passphrase is asked
    if homeowner_only:
        from ..report.build import homeowner_extract

        if sign:
            raise UserError("--homeowner-only: the extract is never signed; the signed "
                            "record it names is the authority (drop --sign)")
        if record is None:
            raise UserError("--homeowner-only: give --record SIGNED.pdf, the signed record "
                            "whose SHA-256 the extract names")
        try:
            signed = record.read_bytes()
        except OSError as exc:
            raise UserError(f"{record}: cannot read ({exc.strerror})") from None
        with open_register(register, create=False) as reg:
            state = JobState(reg, reg.find_job(job))
            pdf = homeowner_extract(state, form_data, signed)
            state.files.close()
        _check_out(out, force, sign=False)
        _write(out, pdf)
        typer.echo(f"homeowner extract written: {out} ({len(pdf)} bytes, unsigned, language "
                   f"{state.job.details.get('language') or 'en'})")
        return
    if record is not None:
        raise UserError("--record: only with --homeowner-only")
    passphrase = None
    if sign:
        from ..report.identity import load_identity, passphrase_from

        load_identity()  # a clear line if there is no identity yet
        passphrase = passphrase_from(passphrase_file)
        if passphrase is None:
            passphrase = typer.prompt("Key passphrase", hide_input=True)
    with open_register(register, create=False) as reg:
        state = JobState(reg, reg.find_job(job))
        made = make(state, form_data, sign=sign, passphrase=passphrase)
        state.remember_status()
        state.files.close()
    kept = _check_out(out, force, sign)
    _write(out, made.pdf)
    if kept is not None:
        typer.echo(f"{out} was a signed record: it is kept as {kept.name}; the new record "
                   "is unsigned", err=True)
    typer.echo(f"record written: {out} ({len(made.pdf)} bytes, status {made.status}, "
               f"{'signed' if sign else 'unsigned'})")
    typer.echo(f"record SHA-256 {made.record_sha256}")
    if made.not_attached:
        typer.echo(f"not attached (over 20 MB, hash only): {', '.join(made.not_attached)}")


def verify(
    file: Annotated[Path, typer.Argument(help="The handover PDF.")],
    as_json: JsonOpt = False,
    trust: Annotated[
        list[Path] | None, typer.Option(help="Also trust this certificate, for this call.")
    ] = None,
    checklist: Annotated[
        Path | None,
        typer.Option(help="The checklist the record must have been judged with (a file)."),
    ] = None,
    strict: Annotated[
        bool, typer.Option(help="Fail when this version judges any item differently.")
    ] = False,
) -> None:
    """Check a record: signatures, the embedded record and every verdict (exit 0/1/2)."""
    from ..fingerprint import readable
    from ..record import safe

    result = _verification(file, trust, checklist, strict)
    ok = result.ok()
    if as_json:
        emit_json(result.as_json())
    else:
        for s in result.signatures:
            typer.echo(f"signature: {safe(s['signer'])} · "
                       f"{'valid' if s['valid'] else 'INVALID'} · "
                       f"{'trusted' if s['trusted'] else 'not trusted'} · "
                       f"{'covers the whole file' if s['covers_whole'] else 'partial'} · "
                       f"signing time {safe(s['signing_time'])} (claimed by the signer)")
            typer.echo(f"  certificate SHA-256 {readable(s['fingerprint'])}")
        for t in result.timestamps:
            typer.echo(f"timestamp: {safe(t['tsa'])} · "
                       f"{'valid' if t['valid'] else 'INVALID'} · "
                       f"{'trusted' if t['trusted'] else 'not trusted'} · "
                       f"time {safe(t['time'])} (attested by the timestamp authority)")
            typer.echo(f"  certificate SHA-256 {readable(t['fingerprint'])}")
        if not result.record_embedded and result.problems:
            typer.echo("embedded record: not read (signatures and integrity come first)")
        else:
            typer.echo(f"embedded record: {'yes' if result.record_embedded else 'no'}; hash "
                       f"{'matches' if result.record_hash_match else 'DOES NOT match'} the "
                       "document")
        if result.pages_match:
            typer.echo("pages: say what the record says (footers, status, every item's "
                       "verdict and answer)")
        elif any(p.startswith("the pages do not say") for p in result.problems):
            typer.echo("pages: DIFFER from the record")
        content = result.content
        if content is not None and content.record is not None:
            c = content.checklist
            what = {"released": f"released {c.id} {c.version}",
                    "named": f"{c.id} {c.version}, the checklist you named",
                    "custom": f"custom checklist {c.id} {c.version}"}.get(c.kind)
            if what:
                typer.echo(f"checklist: {safe(what)} (sha256 {c.sha256[:16]}…)")
            for line in c.differences:
                typer.echo(f"  differs: {safe(line)}")
            typer.echo(f"made by commission {safe(content.program_version)}, check logic "
                       f"{content.check_logic[0]} (this version: {content.check_logic[1]})")
        if content is not None:
            typer.echo(f"verdicts re-evaluated: "
                       f"{'all match' if result.verdicts_match else 'MISMATCH'}"
                       f"; not re-evaluable: {', '.join(result.not_reevaluable) or 'none'}")
        for notice in result.notices:
            if not notice.startswith("custom checklist"):
                typer.echo(f"notice: {safe(notice)}")
        if result.job_status is not None:
            typer.echo(f"job status in the record: {safe(result.job_status)}")
        if not result.timestamps:
            typer.echo("no document timestamp: signing times are as the signers' computers "
                       "claimed ('commission seal' adds one once online)")
    if not ok:
        typer.echo(f"verification failed: {safe(result.first_problem())}", err=True)
        raise typer.Exit(1)
    if not as_json:
        typer.echo("verified")


def _verification(file: Path, trust: list[Path] | None, checklist: Path | None = None,
                  strict: bool = False, read_anyway: bool = False):
    from ..errors import UserError
    from ..report.identity import load_certificate_bytes
    from ..report.verify import verify as run

    if not file.is_file():
        raise UserError(f"{file}: no such file" if not file.exists() else
                        f"{file}: is not a file")
    certs = []
    for path in trust or []:
        try:
            certs.append(load_certificate_bytes(path.read_bytes(), str(path)))
        except OSError as exc:
            raise UserError(f"{path}: cannot read ({exc.strerror})") from None
    named = None
    if checklist is not None:
        from ..checklist import load
        from ..checks import CHECKS

        named = load(checklist, checks=CHECKS, strict=False)
    # the file is read in place (never whole): see report/source.py
    return run(file, certs, checklist=named, strict=strict, read_anyway=read_anyway)


def _record_to_take(file: Path, trust: list[Path] | None, unverified: bool, *,
                    refused: str, hint: str, nothing: str):
    """Verify a handover PDF before a command takes its record (import, revisit).

    A failed verification stops it with exit 1 and nothing written, unless ``unverified``:
    ``refused: NAME: problem (nothing written; hint)``. A record that cannot be read, or
    whose checklist or entries failed, is never taken, even unverified: a one-line error
    ending ``; nothing``. Returns the verification (its ``content.record`` is readable)."""
    from ..errors import UserError
    from ..record import safe

    result = _verification(file, trust, read_anyway=unverified)
    if not result.ok() and not unverified:
        typer.echo(f"{refused}: {file.name}: {safe(result.first_problem())} (nothing "
                   f"written; {hint})", err=True)
        raise typer.Exit(1)
    content = result.content
    if content is None or content.record is None:
        # no record, or one that cannot be read: never taken, even unverified
        problem = result.first_problem() if content is None else content.problem
        raise UserError(f"{file}: {problem}; {nothing}")
    if content.failed_at in ("checklist", "entries") and content.problem and \
            "claims a released version" not in content.problem:
        raise UserError(f"{file}: {content.problem}; {nothing}")
    return result


def import_(
    file: Annotated[Path, typer.Argument(help="A handover PDF made by commission.")],
    unverified: Annotated[
        bool, typer.Option(help="Import a record that does not verify; the job is then "
                           "marked unverified wherever it is shown.")
    ] = False,
    trust: Annotated[
        list[Path] | None, typer.Option(help="Also trust this certificate, for this call.")
    ] = None,
    register: RegisterOpt = None,
) -> None:
    """Restore the job inside a verified handover PDF into the register (same ids)."""
    from ..record import safe
    from ..report.restore import restore

    result = _record_to_take(file, trust, unverified, refused="not imported",
                             hint="--unverified imports it marked unverified",
                             nothing="not imported")
    record = result.content.record
    from ..report.signatures import open_pdf
    from ..report.source import opened
    from ..report.verify import attachments

    with opened(file) as stream:
        attached = attachments(open_pdf(stream)[0])
        files = {}
        for meta in record.files:
            try:
                files[meta.sha256] = attached[meta.sha256]
            except KeyError:
                continue
    state = "verified" if result.ok() else "unverified"
    # the record's hash names it to a later revisit
    short, restored = restore(register, record, files, imported=state,
                              record_sha256=result.content.record_sha256 or "")
    if state == "unverified":
        typer.echo(f"imported UNVERIFIED ({safe(result.first_problem())})")
    typer.echo(f"imported job {safe(short)} with {len(record.entries)} entries and "
               f"{restored} files")
    typer.echo(safe(short))


def blank(
    checklist: Annotated[str, typer.Argument(help="Checklist file or shipped name.")],
    out: Annotated[Path, typer.Option(help="The PDF to write.")],
) -> None:
    """Print a checklist as a paper form to fill by hand."""
    from ..checklist import load
    from ..checks import CHECKS
    from ..report.blank import render
    from ..resources import resolve

    loaded = load(resolve("checklists", checklist), checks=CHECKS)
    _write(out, render(loaded))
    typer.echo(f"paper form written: {out}")


def seal(
    file: Annotated[Path, typer.Argument(help="A signed record (PDF).")],
    tsa: Annotated[str, typer.Option("--tsa", help="The timestamp authority's URL (RFC 3161).")],
    out: Annotated[Path, typer.Option("--out", help="Where to write the sealed PDF.")],
) -> None:
    """Add a document timestamp and validation data (PAdES B-LT/B-LTA), once online."""
    from ..errors import UserError
    from ..record import safe
    from ..report.seal import seal as run
    from ..report.signatures import check_signatures

    try:
        data = file.read_bytes()
    except OSError as exc:
        raise UserError(f"{file}: cannot read ({exc.strerror})") from None
    if out.exists():
        raise UserError(f"{out}: already exists; choose another --out")
    sealed = run(data, tsa)
    _write(out, sealed)
    report = check_signatures(sealed)
    typer.echo(f"sealed: {out}")
    for t in report.timestamps:
        typer.echo(f"timestamp by {safe(t.tsa)}: {safe(t.time)} (attested); "
                   f"{'trusted' if t.trusted else 'not trusted here'}")
