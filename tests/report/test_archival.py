"""PDF/A-3b as far as it can be checked here (no independent PDF/A validator is available
from the package registries): pdffonts (every font embedded), pdfminer via pdfplumber (the
XMP packet parsed with xml.etree: pdfaid part 3, conformance B, in step with the document
info dictionary of the last revision; the ICC output intent, its profile header per the ICC
specification; /AF with /AFRelationship /Data on the record), qpdf --check, and pdfsig for
the signature after all of this."""

from __future__ import annotations

import datetime as dt
import subprocess
import xml.etree.ElementTree as ET

from conftest import need_tool

NS = {"rdf": "http://www.w3.org/1999/02/22-rdf-syntax-ns#",
      "dc": "http://purl.org/dc/elements/1.1/", "xmp": "http://ns.adobe.com/xap/1.0/",
      "pdf": "http://ns.adobe.com/pdf/1.3/", "pdfaid": "http://www.aiim.org/pdfa/ns/id/"}


def _xmp_fields(packet: bytes) -> dict[str, str]:
    """Every property of the rdf:Description elements, as attributes or elements."""
    root = ET.fromstring(packet.decode("utf-8").split("?>", 1)[1].rsplit("<?xpacket", 1)[0])
    out: dict[str, str] = {}
    for desc in root.iter(f"{{{NS['rdf']}}}Description"):
        for key, value in desc.attrib.items():
            out[key] = value
        for child in desc:
            texts = [li.text or "" for li in child.iter(f"{{{NS['rdf']}}}li")]
            out[child.tag] = texts[0] if texts else (child.text or "")
    return out


def _pdf_date(text: str) -> dt.datetime:
    """A PDF date string (D:YYYYMMDDHHmmSS with Z or +HH'mm') as an aware datetime."""
    s = text.removeprefix("D:")
    when = dt.datetime.strptime(s[:14], "%Y%m%d%H%M%S")
    rest = s[14:]
    if rest in ("", "Z") or rest.startswith("Z"):
        return when.replace(tzinfo=dt.UTC)
    sign = 1 if rest[0] == "+" else -1
    hours, minutes = int(rest[1:3]), int(rest[4:6] or 0)
    return when.replace(tzinfo=dt.timezone(sign * dt.timedelta(hours=hours, minutes=minutes)))


def _value(obj):
    from pdfminer.psparser import PSLiteral
    from pdfminer.utils import decode_text

    if isinstance(obj, bytes):
        return decode_text(obj)  # PDFDocEncoding, or UTF-16BE with its byte-order mark
    if isinstance(obj, PSLiteral):
        return obj.name
    return obj


def test_every_font_is_embedded(demo_record):
    need_tool("pdffonts")
    out = subprocess.run(["pdffonts", str(demo_record)], capture_output=True, text=True,
                         check=True).stdout.splitlines()[2:]
    assert out, "no fonts listed"
    for line in out:
        columns = line.split()
        # name type... emb sub uni object ID: 'emb' is the fifth column from the end
        assert columns[-5] == "yes", line


def test_xmp_says_pdfa3b_and_matches_the_info(demo_record):
    import pdfplumber
    from pdfminer.pdftypes import resolve1

    with pdfplumber.open(demo_record) as pdf:
        catalog = pdf.doc.catalog
        packet = resolve1(catalog["Metadata"]).get_data()
        info = {k: _value(resolve1(v)) for k, v in pdf.doc.info[-1].items()}
        intents = resolve1(catalog["OutputIntents"])
        intent = resolve1(intents[0])
        profile = resolve1(intent["DestOutputProfile"])
        icc = profile.get_data()
        af = [resolve1(x) for x in resolve1(catalog["AF"])]
        af_record = [x for x in af if _value(x.get("F")) == "commission-record.json"]
    x = _xmp_fields(packet)
    assert x[f"{{{NS['pdfaid']}}}part"] == "3"
    assert x[f"{{{NS['pdfaid']}}}conformance"] == "B"
    assert x[f"{{{NS['dc']}}}title"] == info["Title"]
    assert x[f"{{{NS['dc']}}}creator"] == info["Author"]
    assert x[f"{{{NS['dc']}}}description"] == info["Subject"]
    assert x[f"{{{NS['xmp']}}}CreatorTool"] == info["Creator"]
    assert x[f"{{{NS['pdf']}}}Producer"] == info["Producer"]
    assert x[f"{{{NS['pdf']}}}Keywords"] == info["Keywords"]
    for xmp_key, info_key in (("CreateDate", "CreationDate"), ("ModifyDate", "ModDate")):
        xmp_when = dt.datetime.fromisoformat(x[f"{{{NS['xmp']}}}{xmp_key}"])
        assert abs((xmp_when - _pdf_date(info[info_key])).total_seconds()) <= 1, xmp_key
    # ICC output intent: the profile header per ICC.1 (signature 'acsp' at byte 36, data
    # colour space 'RGB ' at byte 16), three components.
    assert _value(intent["S"]) == "GTS_PDFA1"
    assert resolve1(profile.attrs["N"]) == 3
    assert icc[36:40] == b"acsp" and icc[16:20] == b"RGB "
    assert len(af_record) == 1 and _value(af_record[0]["AFRelationship"]) == "Data"


def test_qpdf_check_is_clean_and_the_signature_still_validates(demo_record):
    need_tool("qpdf")
    need_tool("pdfsig")
    check = subprocess.run(["qpdf", "--check", str(demo_record)], capture_output=True,
                           text=True)
    assert check.returncode == 0, check.stdout + check.stderr
    assert "No syntax or stream encoding errors found" in check.stdout
    assert "WARNING" not in check.stdout + check.stderr
    sig = subprocess.run(["pdfsig", str(demo_record)], capture_output=True, text=True)
    assert "Signature is Valid." in sig.stdout
    assert "Total document signed" in sig.stdout
