"""render_pdf writes PDF/A-3b carrying its evidence as associated files.

veraPDF (the reference PDF/A validator) is not available on this machine, so conformance
as a whole is not validated here; these tests check, with pypdf, the parts of ISO 19005-3
that identify and carry the evidence: the XMP identification (pdfaid:part 3,
pdfaid:conformance B), the attachments and their AFRelationship, dates agreeing between
the document information and XMP, an output intent with an ICC profile, embedded fonts.
The rules are recalled from ISO 19005-1/-3 (from memory). The HTML is the INVENTED
fixture of conftest.py.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import xml.etree.ElementTree as ET
from pathlib import Path

import pypdf
import pytest

from appendix.render import PdfAttachment, RenderOptions, render_pdf

DATED = _dt.datetime(2026, 3, 1, 12, 30, 5, tzinfo=_dt.timezone.utc)
PDFAID = "{http://www.aiim.org/pdfa/ns/id/}"  # the PDF/A identification schema (from memory)
XMP = "{http://ns.adobe.com/xap/1.0/}"
STUDY = b"# INVENTED study file for a test\nformat: 1\nstudy: {id: T-1}\n"
RESULTS = b'{\n  "alpha": 0.05\n}\n'
MANIFEST = b'{\n  "run_time": "2026-03-01T12:30:05+00:00"\n}\n'
ATTACHMENTS = (
    PdfAttachment("study.yaml", STUDY, "application/yaml", "the study file", "Source"),
    PdfAttachment("results.json", RESULTS, "application/json", "the results", "Data"),
    PdfAttachment("manifest.json", MANIFEST, "application/json", "the manifest", "Supplement"),
)


@pytest.fixture(scope="module")
def pdfa(html, tmp_path_factory) -> Path:
    path = tmp_path_factory.mktemp("pdfa") / "appendix.pdf"
    render_pdf(html, path, RenderOptions(), attachments=ATTACHMENTS, dated=DATED)
    return path


def _xmp(reader: pypdf.PdfReader) -> ET.Element:
    return ET.fromstring(reader.trailer["/Root"]["/Metadata"].get_object().get_data()
                         .split(b"?>", 1)[1].rsplit(b"<?xpacket", 1)[0])


def test_pdfa_3b_identification(pdfa):
    reader = pypdf.PdfReader(pdfa)
    assert reader.pdf_header == "%PDF-1.7"
    described = [d.attrib for d in _xmp(reader).iter(
        "{http://www.w3.org/1999/02/22-rdf-syntax-ns#}Description")]
    ids = [a for a in described if f"{PDFAID}part" in a]
    assert ids == [{"{http://www.w3.org/1999/02/22-rdf-syntax-ns#}about": "",
                    f"{PDFAID}part": "3", f"{PDFAID}conformance": "B"}]


def test_attachments_are_associated_files_equal_to_the_inputs(pdfa):
    reader = pypdf.PdfReader(pdfa)
    assert {name: reader.attachments[name] for name in reader.attachments} == {
        "study.yaml": [STUDY], "results.json": [RESULTS], "manifest.json": [MANIFEST]}
    associated = [ref.get_object() for ref in reader.trailer["/Root"]["/AF"]]
    assert len({id(o) for o in associated}) == len(associated) == 3  # each listed once
    found = {}
    for spec in associated:
        stream = spec["/EF"]["/F"].get_object()
        assert stream["/Params"]["/ModDate"] == "D:20260301123005Z"
        checksum = stream["/Params"]["/CheckSum"]  # pypdf may decode the bytes as text
        assert getattr(checksum, "original_bytes", checksum) == \
            hashlib.md5(stream.get_data()).digest()
        found[spec["/UF"]] = (spec["/AFRelationship"], stream["/Subtype"], spec["/Desc"])
    assert found == {
        "study.yaml": ("/Source", "/application/yaml", "the study file"),
        "results.json": ("/Data", "/application/json", "the results"),
        "manifest.json": ("/Supplement", "/application/json", "the manifest")}


def test_dates_agree_between_information_and_xmp(pdfa):
    reader = pypdf.PdfReader(pdfa)
    assert reader.metadata["/CreationDate"] == "D:20260301123005Z"
    assert reader.metadata["/ModDate"] == "D:20260301123005Z"
    root = _xmp(reader)
    assert [e.text for e in root.iter(f"{XMP}CreateDate")] == ["2026-03-01T12:30:05Z"]
    assert [e.text for e in root.iter(f"{XMP}ModifyDate")] == ["2026-03-01T12:30:05Z"]


def test_output_intent_and_embedded_fonts(pdfa):
    reader = pypdf.PdfReader(pdfa)
    (intent,) = [i.get_object() for i in reader.trailer["/Root"]["/OutputIntents"]]
    assert intent["/S"] == "/GTS_PDFA1"
    assert intent["/DestOutputProfile"].get_object()["/N"] == 3  # an RGB ICC profile
    fonts = [font.get_object() for page in reader.pages
             for font in page["/Resources"]["/Font"].values()]
    assert fonts
    for font in fonts:
        descriptor = (font["/DescendantFonts"][0].get_object() if "/DescendantFonts" in font
                      else font)["/FontDescriptor"].get_object()
        assert {"/FontFile", "/FontFile2", "/FontFile3"} & set(descriptor), font["/BaseFont"]


def test_same_inputs_give_the_same_bytes_and_the_date_changes_only_dates(html, pdfa, tmp_path):
    again = tmp_path / "again.pdf"
    render_pdf(html, again, RenderOptions(), attachments=ATTACHMENTS, dated=DATED)
    assert again.read_bytes() == pdfa.read_bytes()
    later = tmp_path / "later.pdf"
    render_pdf(html, later, RenderOptions(), attachments=ATTACHMENTS,
               dated=DATED + _dt.timedelta(days=1))
    assert later.read_bytes() != pdfa.read_bytes()
    assert pypdf.PdfReader(later).metadata["/CreationDate"] == "D:20260302123005Z"


def test_attachments_need_a_date_and_a_known_relationship(tmp_path):
    with pytest.raises(ValueError, match="attachments need a date"):
        render_pdf("<p>x</p>", tmp_path / "x.pdf", RenderOptions(), attachments=ATTACHMENTS)
    with pytest.raises(ValueError, match="relationship must be one of"):
        PdfAttachment("x", b"", "text/plain", "x", "Alternative")


def test_without_a_date_the_pdf_carries_none(tmp_path):
    path = tmp_path / "undated.pdf"
    render_pdf("<p>x</p>", path, RenderOptions())
    reader = pypdf.PdfReader(path)
    assert "/CreationDate" not in reader.metadata and "/ModDate" not in reader.metadata
    assert list(_xmp(reader).iter(f"{XMP}CreateDate")) == []
