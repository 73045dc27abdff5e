"""CDM in XML (CCSDS 508.0-B-1 with the NDM/XML schema): parsed with defusedxml (no entities,
no DTDs, no external fetches) into the same keyword tables the KVN reader makes, so one set
of checks (risk/cdm.py) covers both.

Layout read: <cdm version=...> (CCSDS_CDM_VERS), <header> keywords, <body> with
<relativeMetadataData> (TCA, MISS_DISTANCE, the relative state, screening period, Pc ...) and
two <segment>s, each <metadata> (OBJECT, OBJECT_DESIGNATOR, ..., REF_FRAME) and <data>
(<stateVector>, <covarianceMatrix>, optional OD and additional parameters).  Every leaf
element is a keyword; a `units` attribute is its unit.  Namespaces are ignored.
"""

from __future__ import annotations

from ..errors import ParseError

HEADER_TAG, BODY_TAG, RELATIVE_TAG, SEGMENT_TAG = "header", "body", "relativeMetadataData", "segment"


def _local(tag: str) -> str:
    return tag.rsplit("}", 1)[-1]


def parse_xml(text: str, path: str):
    """(header, relative, objects, lineno_of, units) as risk.cdm._parse_kvn returns them."""
    import defusedxml.ElementTree as DET
    from defusedxml import DefusedXmlException
    from xml.etree.ElementTree import ParseError as XmlError

    try:
        root = DET.fromstring(text)
    except DefusedXmlException as exc:
        raise ParseError(f"XML refused: {type(exc).__name__} (entities and DTDs are not "
                         f"accepted)", path, 1) from None
    except XmlError as exc:
        line = getattr(exc, "position", (1, 0))[0]
        raise ParseError(f"not well-formed XML: {str(exc).split(':')[0]}", path, line) from None
    if _local(root.tag) != "cdm":
        raise ParseError(f"XML root element is <{_local(root.tag)}>, not <cdm>", path, 1)
    lines = _Lines(text)
    header, relative, objects = {}, {}, []
    lineno_of, units = {}, {}
    if root.get("version"):
        header["CCSDS_CDM_VERS"] = root.get("version").strip()
        lineno_of[(0, "CCSDS_CDM_VERS")] = 1

    def take(elem, target: dict, k: int) -> None:
        for leaf in elem.iter():
            if len(leaf) or leaf is elem:
                continue
            key = _local(leaf.tag)
            line = lines.next(key)
            if key == "COMMENT":
                continue
            if key in target:
                raise ParseError(f"keyword {key} given twice (first at line "
                                 f"{lineno_of[(k, key)]})", path, line)
            target[key] = (leaf.text or "").strip()
            lineno_of[(k, key)] = line
            if leaf.get("units"):
                units[(k, key)] = leaf.get("units").strip()

    for part in root:
        name = _local(part.tag)
        if name == HEADER_TAG:
            take(part, header, 0)
        elif name == BODY_TAG:
            for sub in part:
                sname = _local(sub.tag)
                if sname == RELATIVE_TAG:
                    take(sub, relative, 0)
                elif sname == SEGMENT_TAG:
                    obj: dict = {}
                    objects.append(obj)
                    take(sub, obj, len(objects))
    return header, relative, objects, lineno_of, units


class _Lines:
    """Line numbers of successive elements, found by scanning the text in document order
    (ElementTree keeps none)."""

    def __init__(self, text: str):
        self.text = text
        self.pos = 0

    def next(self, tag: str) -> int:
        import re

        m = re.compile(r"<(?:[A-Za-z_][\w.-]*:)?" + re.escape(tag) + r"[\s>/]").search(self.text, self.pos)
        if m is None:
            return 1
        self.pos = m.end()
        return self.text.count("\n", 0, m.start()) + 1
