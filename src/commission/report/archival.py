"""PDF/A-3b for the handover record, so it can be kept for decades.

reportlab writes no structure tree, so level a is out of reach; level b asks for what is
done here and in ``pdf.py``: every font embedded (only the bundled DejaVu fonts are used,
never a base-14 font), XMP metadata naming ``pdfaid:part`` 3 and ``pdfaid:conformance`` B
and kept in step with the document info dictionary (pyHanko updates both on every later
incremental revision, signatures included), an ICC output intent, and every embedded file
an associated file (``/AF``) with its ``/AFRelationship``.

The output intent's profile ``srgb.icc`` is LittleCMS's built-in sRGB profile (IEC
61966-2-1 primaries and tone curve), written once with Pillow's ImageCms binding
(``ImageCms.ImageCmsProfile(ImageCms.createProfile("sRGB")).tobytes()``, LittleCMS 2,
MIT licence; Pillow, HPND licence); it carries no third-party copyright text.
"""

from __future__ import annotations

from datetime import datetime
from pathlib import Path

ICC_PROFILE = Path(__file__).resolve().parent / "srgb.icc"
OUTPUT_CONDITION = "sRGB IEC61966-2.1"


def _text(info, key: str) -> str | None:
    value = info.get(key)
    return str(value) if value is not None else None


def make_pdfa3b(writer, created: datetime) -> None:
    """Add XMP (with the PDF/A identification) and the sRGB output intent to the document
    being written by ``writer`` (a pyHanko incremental writer)."""
    from pyhanko.pdf_utils import generic
    from pyhanko.pdf_utils.metadata import model

    info_ref = writer.trailer.raw_get("/Info")
    info = info_ref.get_object()
    # The producer in both places is pyHanko's name, which every later revision keeps
    # (it appends its name to a producer that lacks it, which would break the match).
    info["/Producer"] = generic.TextStringObject(model.VENDOR)
    writer.update_container(info_ref)

    meta = writer.document_meta
    meta.title = _text(info, "/Title")
    meta.author = _text(info, "/Author")
    meta.subject = _text(info, "/Subject")
    meta.creator = _text(info, "/Creator")
    meta.created = created.replace(microsecond=0)
    pdfaid, pdf = model.NS["pdfaid"], model.NS["pdf"]
    extra = [(model.ExpandedName(pdfaid, "part"), model.XmpValue("3")),
             (model.ExpandedName(pdfaid, "conformance"), model.XmpValue("B"))]
    keywords = _text(info, "/Keywords")
    if keywords:
        extra.append((model.ExpandedName(pdf, "Keywords"), model.XmpValue(keywords)))
    meta.xmp_extra = [model.XmpStructure.of(*extra)]

    profile = generic.StreamObject({generic.NameObject("/N"): generic.NumberObject(3)},
                                   stream_data=ICC_PROFILE.read_bytes())
    profile.compress()
    intent = generic.DictionaryObject({
        generic.NameObject("/Type"): generic.NameObject("/OutputIntent"),
        generic.NameObject("/S"): generic.NameObject("/GTS_PDFA1"),
        generic.NameObject("/OutputConditionIdentifier"):
            generic.TextStringObject(OUTPUT_CONDITION),
        generic.NameObject("/Info"): generic.TextStringObject(OUTPUT_CONDITION),
        generic.NameObject("/RegistryName"): generic.TextStringObject("http://www.color.org"),
        generic.NameObject("/DestOutputProfile"): writer.add_object(profile),
    })
    writer.root[generic.NameObject("/OutputIntents")] = generic.ArrayObject(
        [writer.add_object(intent)])
    writer.update_root()
