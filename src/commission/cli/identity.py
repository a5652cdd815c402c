"""commission identity new|show|export|backup|restore, trust add|list|remove, countersign

Only typer is imported here at start-up; cryptography and pyHanko load inside the
commands.
"""

from pathlib import Path
from typing import Annotated

import typer

from ..fingerprint import readable
from .common import JsonOpt, emit_json, friendly

identity_app = typer.Typer(
    help="Your signing identity: a key pair and a self-signed certificate naming you.",
    no_args_is_help=True,
)
trust_app = typer.Typer(
    help="Certificates you trust when checking signed records.", no_args_is_help=True)

PassFileOpt = Annotated[
    Path | None,
    typer.Option("--passphrase-file",
                 help="File holding the key's passphrase (one line). Default: "
                      "$COMMISSION_PASSPHRASE, else you are asked.",
                 show_default=False),
]
ForceOpt = Annotated[bool, typer.Option("--force", help="Replace the current identity; the "
                                                        "old one is kept under retired/.")]


def ask_passphrase(file: Path | None, *, new: bool = False) -> str:
    """From --passphrase-file, $COMMISSION_PASSPHRASE, or a hidden prompt (twice if new)."""
    from ..errors import UserError
    from ..report.identity import check_passphrase, passphrase_from

    found = passphrase_from(file)
    if found is not None:
        return found
    text = "New passphrase for the signing key" if new else "Passphrase for the signing key"
    try:
        value = typer.prompt(text, hide_input=True, confirmation_prompt=new,
                             show_default=False)
    except typer.Abort:
        raise UserError("no passphrase given: type it when asked, or use --passphrase-file "
                        "or COMMISSION_PASSPHRASE") from None
    return check_passphrase(value)


def _show(data: dict) -> None:
    typer.echo(f"name:         {data['name']}")
    typer.echo(f"registration: {data['registration'] or '-'}")
    if data.get("email"):
        typer.echo(f"e-mail:       {data['email']}")
    typer.echo(f"fingerprint:  {readable(data['fingerprint'])}  (SHA-256 of the "
               "certificate)")
    typer.echo(f"key:          {data['key']}")
    typer.echo(f"valid:        {data['valid_from'][:10]} to {data['valid_until'][:10]}")


# --------------------------------------------------------------------------- identity


@identity_app.command()
@friendly
def new(
    name: Annotated[str, typer.Option("--name", help="Your name as it should appear on "
                                                      "records.")],
    registration: Annotated[str, typer.Option("--registration",
                                              help="Your trade registration number.")],
    email: Annotated[str | None, typer.Option("--email", help="Contact e-mail.")] = None,
    years: Annotated[int, typer.Option("--years", help="Years the certificate is valid.")] = 10,
    key: Annotated[str, typer.Option("--key", help="Key type: ec-p256 or rsa-3072.")] = "ec-p256",
    passphrase_file: PassFileOpt = None,
    force: ForceOpt = False,
    trust_self: Annotated[bool, typer.Option(
        "--trust-self/--no-trust-self",
        help="Also add your certificate to your own trust store.")] = True,
) -> None:
    """Make your signing key (passphrase-encrypted) and self-signed certificate."""
    from ..errors import UserError
    from ..report import identity as ident
    from ..report import trust

    ident.validate_subject(name, registration, email)
    if ident.exists() and not force:
        raise UserError(f"an identity already exists in {ident.identity_dir()}; give --force "
                        "to replace it (the old one is kept under retired/)")
    passphrase = ask_passphrase(passphrase_file, new=True)
    from ..report.passphrase import weakness

    problem = weakness(passphrase)
    if problem is not None:
        raise UserError(f"identity new: {problem}; no key was made")
    made, retired = ident.create_identity(name, registration, passphrase=passphrase,
                                          email=email, years=years, key_type=key, force=force)
    typer.echo(f"identity made for {made.name}")
    _show(ident.describe(made.cert))
    typer.echo(f"key file:     {made.key_file}  (encrypted, readable by you only)")
    typer.echo(f"certificate:  {made.cert_file}")
    if retired:
        typer.echo(f"the previous identity was moved to {retired}")
    if trust_self:
        trust.add(made.cert_file, label=f"{made.name} (own identity)")
        typer.echo("Your own certificate was added to YOUR trust store, so records you sign "
                   "check as trusted on this computer.")
    typer.echo("Reviewers trust you only once they add your certificate: give them the file "
               "from 'commission identity export --out me.pem' and confirm the fingerprint "
               "with them in person or by phone.")


@identity_app.command()
@friendly
def show(as_json: JsonOpt = False) -> None:
    """Show your identity: name, registration, fingerprint and validity."""
    from ..report.identity import load_identity

    me = load_identity()
    data = me.as_json()
    if as_json:
        emit_json(data)
        return
    _show(data)
    typer.echo(f"key file:     {me.key_file}")
    typer.echo(f"certificate:  {me.cert_file}")


@identity_app.command()
@friendly
def export(
    out: Annotated[Path, typer.Option("--out", help="Where to write the certificate (PEM).")],
) -> None:
    """Write your certificate (public, no key) for reviewers to trust."""
    from ..report.identity import export_certificate

    me = export_certificate(out)
    typer.echo(f"certificate of {me.name} written to {out}")
    typer.echo(f"fingerprint {readable(me.fingerprint)}")


@identity_app.command()
@friendly
def backup(
    out: Annotated[Path, typer.Option("--out", help="Backup file to write (PKCS#12).")],
    passphrase_file: PassFileOpt = None,
) -> None:
    """Write an encrypted copy of your key and certificate (same passphrase)."""
    from ..report.identity import backup_identity, load_identity

    load_identity()  # say "no identity" before asking for a passphrase
    me = backup_identity(out, ask_passphrase(passphrase_file))
    typer.echo(f"encrypted backup of {me.name}'s key and certificate written to {out}")
    typer.echo("it opens with the same passphrase; keep it off this computer")


@identity_app.command()
@friendly
def restore(
    src: Annotated[Path, typer.Argument(help="A file made by 'identity backup'.")],
    passphrase_file: PassFileOpt = None,
    force: ForceOpt = False,
) -> None:
    """Put an identity back from a backup."""
    from ..report.identity import describe, restore_identity

    me, retired = restore_identity(src, ask_passphrase(passphrase_file), force=force)
    typer.echo(f"identity of {me.name} restored")
    _show(describe(me.cert))
    if retired:
        typer.echo(f"the previous identity was moved to {retired}")


# --------------------------------------------------------------------------- trust


@trust_app.command("add")
@friendly
def trust_add(
    cert: Annotated[Path, typer.Argument(help="Certificate file (PEM or DER).")],
    label: Annotated[str | None, typer.Option("--name", help="Label to show in lists "
                                                             "(default: the name in it).")]
    = None,
    authority: Annotated[bool, typer.Option(
        "--authority", help="Trust it as a certificate authority: certificates it issued are "
        "trusted too (it must be a CA: basicConstraints CA=true, keyCertSign).")] = False,
    tsa: Annotated[bool, typer.Option(
        "--tsa", help="Trust it as a timestamp authority, for document timestamps "
        "('commission seal').")] = False,
) -> None:
    """Trust a certificate: by default its own key only (signatures made with it)."""
    from ..errors import UserError
    from ..report import trust

    if authority and tsa:
        raise UserError("trust add: give --authority or --tsa, not both (add the "
                        "certificate twice for both roles)")
    role = "authority" if authority else "tsa" if tsa else "signer"
    entry, is_new = trust.add(cert, label=label, role=role)
    data = entry.as_json()
    what = {"signer": "its own key", "authority": "certificates it issues (authority)",
            "tsa": "document timestamps (timestamp authority)"}[role]
    verb = "now trusted" if is_new else "already trusted"
    typer.echo(f"{verb} for {what}: {entry.label}")
    typer.echo(f"  name {data['name']}, registration {data['registration'] or '-'}")
    typer.echo(f"  fingerprint {readable(entry.fingerprint)}")
    typer.echo(f"  valid {data['valid_from'][:10]} to {data['valid_until'][:10]}")
    if is_new:
        typer.echo("check the fingerprint with its owner before relying on it")


@trust_app.command("list")
@friendly
def trust_list(as_json: JsonOpt = False) -> None:
    """List trusted certificates, with what each is trusted for."""
    from ..report import trust

    entries = trust.trusted()
    if as_json:
        emit_json([e.as_json() for e in entries])
        return
    if not entries:
        typer.echo("no trusted certificates yet: add one with 'commission trust add CERT.pem'")
    for e in entries:
        data = e.as_json()
        typer.echo(f"{e.label}  ({', '.join(e.roles)}; registration "
                   f"{data['registration'] or '-'}, until {data['valid_until'][:10]})")
        typer.echo(f"  {readable(e.fingerprint)}")


@trust_app.command("remove")
@friendly
def trust_remove(
    fingerprint: Annotated[str, typer.Argument(help="Fingerprint, or its first 6+ hex "
                                                    "digits, as 'trust list' shows.")],
) -> None:
    """Stop trusting a certificate."""
    from ..report import trust

    entry = trust.remove(fingerprint)
    typer.echo(f"no longer trusted: {entry.label} ({readable(entry.fingerprint)})")


# --------------------------------------------------------------------------- countersign


def countersign(
    file: Annotated[Path, typer.Argument(help="A signed record (PDF).")],
    out: Annotated[Path, typer.Option("--out", help="Where to write the countersigned PDF.")],
    passphrase_file: PassFileOpt = None,
    reason: Annotated[str, typer.Option("--reason", help="Why you sign.")] =
    "reviewed and accepted",
    location: Annotated[str | None, typer.Option("--location", help="Where you sign.")] = None,
    installer_fingerprint: Annotated[str | None, typer.Option(
        "--installer-fingerprint", metavar="HEX",
        help="The installer's certificate SHA-256 as they read it out to you: accepts an "
             "installer not in your trust store, for this countersignature only.")] = None,
) -> None:
    """Verify a signed record fully, then add your signature (and your stamp in the box the
    record reserves) in a new revision; earlier signatures stay valid."""
    import os

    from ..errors import UserError
    from ..report.identity import load_identity
    from ..report.signing import countersign as add_signature

    try:
        data = Path(file).read_bytes()
    except FileNotFoundError:
        raise UserError(f"{file}: no such file") from None
    except OSError as exc:
        raise UserError(f"{file}: cannot read ({exc.strerror})") from None
    me = load_identity()
    signed, before = add_signature(data, passphrase=ask_passphrase(passphrase_file),
                                   reason=reason, location=location, identity=me,
                                   installer_fingerprint=installer_fingerprint)
    out = Path(out)
    tmp = out.with_name(f".{out.name}.{os.getpid()}.tmp")
    try:
        tmp.write_bytes(signed)
        os.replace(tmp, out)
    except OSError as exc:
        import contextlib

        with contextlib.suppress(OSError):  # e.g. the folder is a file: nothing to remove
            tmp.unlink(missing_ok=True)
        raise UserError(f"{out}: cannot write ({exc.strerror})") from None
    first = before.signatures[0]
    typer.echo(f"countersigned by {me.name}: {out}")
    how = "trusted" if before.trusted else (
        "confirmed by the fingerprint you typed" if installer_fingerprint else "NOT trusted")
    typer.echo(f"earlier signatures: {len(before.signatures)}, first by {first.signer} "
               f"({how} here)")
