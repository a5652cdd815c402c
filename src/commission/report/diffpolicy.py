"""What a revision after the installer's signature may change: pyHanko's difference
analysis (``pyhanko.sign.diff_analysis``) with a stricter policy than its default.

pyHanko's :data:`~pyhanko.sign.diff_analysis.DEFAULT_DIFF_POLICY` accepts, at
``FORM_FILLING`` level, filling any form field, and at ``LTA_UPDATES`` level any
change of the document information dictionary and any well-formed XMP. A handover
record has no form to fill, and its information dictionary carries the record hash the
pages print, so this policy keeps pyHanko's rules for what signing adds (signature
fields and their values, document timestamps, the DSS, object and xref streams, the
catalogue's form and metadata entries) and narrows three of them:

* form fields: only signature fields may be created or filled
  (:class:`~pyhanko.sign.diff_analysis.SigFieldCreationRule`,
  :class:`~pyhanko.sign.diff_analysis.SigFieldModificationRule`; no
  ``GenericFieldModificationRule``);
* document information: only ``/ModDate`` and ``/Producer`` may change (what pyHanko
  writes when it signs);
* XMP metadata: only ``xmp:ModifyDate``, ``xmp:MetadataDate``, ``pdf:Producer`` and
  the toolkit name may change; anything else (title, keywords, the record hash) is a
  change not made by signing.

Any other change (a page, its content or resources, an annotation, an attachment)
is not explained by any rule, so pyHanko reports it at level ``OTHER``. Whether a
later signature's widget shows anything is checked after the record is read
(:mod:`.stamp`), because the one box where it may is declared inside the record.
"""

from __future__ import annotations

from typing import Any

INFO_SIGNING_KEYS = frozenset({"/ModDate", "/Producer"})
XMP_SIGNING = frozenset({
    "{http://ns.adobe.com/xap/1.0/}ModifyDate",
    "{http://ns.adobe.com/xap/1.0/}MetadataDate",
    "{http://ns.adobe.com/pdf/1.3/}Producer",
    "{adobe:ns:meta/}xmptk",
})


def _deref(resolver, value):
    from pyhanko.pdf_utils import generic

    while isinstance(value, generic.IndirectObject | generic.Reference):
        ref = value.reference if isinstance(value, generic.IndirectObject) else value
        value = resolver(ref)
    return value


def _info(resolver) -> dict[str, str]:
    from pyhanko.pdf_utils import generic

    try:
        raw = resolver.trailer_view.raw_get("/Info")
    except KeyError:
        return {}
    info = _deref(resolver, raw)
    if not isinstance(info, generic.DictionaryObject):
        return {}
    return {str(k): repr(_deref(resolver, info.raw_get(k))) for k in info}


def _xmp_shape(resolver) -> list[Any] | None:
    """The XMP packet as a list of (tag, attributes, text) without what signing changes;
    None when there is none."""
    from lxml import etree
    from pyhanko.pdf_utils import generic

    try:
        raw = resolver.root.raw_get("/Metadata")
    except KeyError:
        return None
    stream = _deref(resolver, raw)
    if not isinstance(stream, generic.StreamObject):
        return ["not a stream"]
    parser = etree.XMLParser(resolve_entities=False, no_network=True, huge_tree=False)
    root = etree.fromstring(stream.data, parser=parser)
    shape: list[Any] = []
    for el in root.iter():
        if not isinstance(el.tag, str):
            shape.append(("#node", (el.text or "").strip()))
            continue
        if el.tag in XMP_SIGNING:
            continue
        attrs = tuple(sorted((k, v) for k, v in el.attrib.items() if k not in XMP_SIGNING))
        shape.append((el.tag, attrs, (el.text or "").strip(), (el.tail or "").strip()))
    return shape


def _rules():
    from pyhanko.sign.diff_analysis import (
        DocInfoRule,
        MetadataUpdateRule,
        SuspiciousModification,
    )

    class SigningInfoRule(DocInfoRule):
        """``/Info`` may change only where signing changes it."""

        def apply(self, old, new):
            before, after = _info(old), _info(new)
            changed = sorted(k for k in set(before) | set(after)
                             if k not in INFO_SIGNING_KEYS and before.get(k) != after.get(k))
            if changed:
                raise SuspiciousModification(
                    f"the document information ({', '.join(changed)}) changed other than "
                    "by signing")
            yield from super().apply(old, new)

    class SigningMetadataRule(MetadataUpdateRule):
        """XMP may change only where signing changes it."""

        def apply(self, old, new):
            updates = list(super().apply(old, new))  # well-formed XML, no entities
            try:
                same = _xmp_shape(old) == _xmp_shape(new)
            except Exception as exc:  # unreadable XMP: not something signing writes
                raise SuspiciousModification(f"the XMP metadata cannot be read ({exc})") \
                    from None
            if not same:
                raise SuspiciousModification("the XMP metadata changed other than by signing")
            yield from updates

    return SigningInfoRule, SigningMetadataRule


_POLICY = None


def signing_only_policy():
    """The :class:`~pyhanko.sign.diff_analysis.StandardDiffPolicy` described above."""
    global _POLICY
    if _POLICY is None:
        from pyhanko.sign.diff_analysis import (
            CatalogModificationRule,
            DSSCompareRule,
            FormUpdatingRule,
            ModificationLevel,
            ObjectStreamRule,
            SigFieldCreationRule,
            SigFieldModificationRule,
            StandardDiffPolicy,
            XrefStreamRule,
        )

        info_rule, xmp_rule = _rules()
        lta = ModificationLevel.LTA_UPDATES
        _POLICY = StandardDiffPolicy(
            global_rules=[
                CatalogModificationRule(),
                info_rule().as_qualified(lta),
                XrefStreamRule().as_qualified(lta),
                ObjectStreamRule().as_qualified(lta),
                DSSCompareRule().as_qualified(lta),
                xmp_rule().as_qualified(lta),
            ],
            form_rule=FormUpdatingRule(field_rules=[SigFieldCreationRule(),
                                                    SigFieldModificationRule()]),
        )
    return _POLICY
