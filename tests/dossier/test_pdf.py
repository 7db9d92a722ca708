"""A dossier PDF read back: PDF/A-3u, fonts, attachments, cover, signatures, footers, charts."""

from __future__ import annotations

import io
import json

import pikepdf

from hazards.dossier.render import DEFERENCE
from tests.dossier.helpers import attachments, fonts, page_texts, sha


def test_the_pdf_identifies_itself_as_pdf_a_3u_in_its_xmp_metadata(issued_data):
    issued = issued_data["dossier"]
    with pikepdf.open(io.BytesIO(issued_data["pdf"])) as pdf:
        meta = pdf.open_metadata()
        assert meta.pdfa_status == "3U"
        assert "Thermal-safety dossier" in str(meta.get("dc:title"))
        assert f"content-sha256={issued.content_sha256}" in str(meta.get("pdf:Keywords"))
        assert "/OutputIntents" in pdf.Root
        assert not pdf.is_encrypted


def test_every_font_is_embedded_and_is_the_shipped_one(issued_data):
    used = fonts(issued_data["pdf"])
    assert used, "no fonts found"
    for name, embedded in used:
        assert embedded, name
        # Subset tag + our family; no system fallback font crept in.
        assert "Exoledger-Sans" in name, name


def test_the_attached_revision_hash_is_the_covers_and_the_databases(issued_data):
    issued, revision = issued_data["dossier"], issued_data["revision"]
    files = attachments(issued_data["pdf"])
    assert set(files) == {"revision.json", "dossier-context.json"}
    record_hash = sha(files["revision.json"])
    assert record_hash == issued.content_sha256 == revision["content_sha256"]
    assert json.loads(files["revision.json"]) == revision["content"]
    assert sha(files["dossier-context.json"]) == issued.context_sha256
    cover = page_texts(issued_data["pdf"])[0]
    assert record_hash in cover.replace(" ", "")


def test_the_cover_names_the_process_revision_status_version_and_every_signature(issued_data):
    cover = page_texts(issued_data["pdf"])[0]
    revision = issued_data["revision"]
    assert issued_data["process"]["name"] in cover
    assert issued_data["process"]["site"] in cover
    assert f"revision {revision['number']}" in cover
    assert revision["state"] in cover
    assert f"version {issued_data['dossier'].version}" in cover
    assert len(issued_data["signatures"]) == 3
    for sig in issued_data["signatures"]:
        assert sig["printed_name"] in cover
        assert sig["signed_at"].strftime("%Y-%m-%d %H:%M:%S UTC") in cover
        assert " ".join(sig["meaning"].split()) in cover


def test_every_page_carries_the_deference_notice_and_page_x_of_y(issued_data):
    texts = page_texts(issued_data["pdf"])
    assert len(texts) >= 5
    for number, text in enumerate(texts, start=1):
        assert DEFERENCE in text, number
        assert f"page {number} of {len(texts)}" in text, number


def test_every_step_page_has_its_charts_with_labelled_axes(issued_data):
    texts = page_texts(issued_data["pdf"])
    steps = issued_data["content"]["record"]["steps"]
    for step in steps:
        heading = f"Step {step['sequence']}. {step['name']}"
        pages = [t for t in texts if heading in t]
        assert pages, heading
        page = pages[0]
        assert "Cooling-failure scenario" in page
        assert "temperature / °C" in page
        assert "TMRad against initial temperature" in page
        if step["operation_mode"] == "semi_batch":
            assert "Accumulation and MTSR during dosing" in page
            assert "from the calorimetry series run-17.csv" in page


def test_the_summary_findings_history_and_references_are_printed(issued_data):
    text = " ".join(page_texts(issued_data["pdf"]))
    content = issued_data["content"]
    assert "Summary of the steps" in text
    assert "Confirm the relief sizing" in text
    assert "Author Persona" in text  # the finding's owner
    assert "Open" in text
    assert "Change history" in text
    assert "revision 1: Being drafted → Lodged for review (signed by its author)" in text
    assert content["context"]["audit_head_hash"] in text.replace(" ", "")
    from calcs.constants import REFERENCES

    keys = {k for s in content["record"]["steps"] for k in s["indicators"]["references"]}
    assert keys
    for key in keys:
        assert f"[{key}]" in text
        assert " ".join(REFERENCES[key].split())[:40] in text


def test_assumed_parameters_print_with_a_label_and_unit_a_reader_knows(issued_data):
    # The DSC onsets of the test process carry no Ea, so the screening method assumed one;
    # the page gives it in kJ/mol under a label, with the calcs key beside it for tracing.
    from hazards.quantities import format_number

    text = " ".join(page_texts(issued_data["pdf"]))
    step = issued_data["content"]["record"]["steps"][0]
    ea = step["indicators"]["parameters"]["screening_activation_energy_j_per_mol"]
    q = step["indicators"]["parameters"]["screening_heat_release_rate_w_per_kg"]
    # numbers by the pages' rule (hazards.quantities.format_number): 50 kJ/mol, not 50.00
    assert (f"Activation energy Ea assumed for the screen {format_number(ea / 1000)} kJ/mol "
            "[screening_activation_energy_j_per_mol]") in text
    assert (f"Heat-release rate assumed at the onset {format_number(q)} W/kg "
            "[screening_heat_release_rate_w_per_kg]") in text
    assert "Kind of TD24 screening estimate [td24_label]" in text


def test_the_pdf_passes_the_structural_checks_we_can_run_without_a_pdf_a_validator(issued_data):
    # No veraPDF can be installed here (INTEGRITY.md §4.4), so the parts of ISO 19005-3
    # (PDF/A-3) and ISO 32000-1 that a structural reader can see, from memory of the standards:
    with pikepdf.open(io.BytesIO(issued_data["pdf"])) as pdf:
        # qpdf's syntax and stream check, including sorted name-tree keys (ISO 32000-1 §7.9.6).
        assert pdf.check_pdf_syntax() == []
        root = pdf.Root
        names = [str(n) for n in root.Names.EmbeddedFiles.Names[::2]]
        assert names == sorted(names) == ["dossier-context.json", "revision.json"]
        # Each embedded file is an associated file of the document with its relationship.
        assert {str(spec.get("/AFRelationship")) for spec in root.AF} == {"/Source"}
        assert len(root.AF) == 2
        # An output intent with an embedded ICC profile; a file identifier in the trailer.
        intent = root.OutputIntents[0]
        assert intent.S == "/GTS_PDFA1" and "/DestOutputProfile" in intent
        assert "/ID" in pdf.trailer
        meta = pdf.open_metadata()
        assert (meta.get("pdfaid:part"), meta.get("pdfaid:conformance")) == ("3", "U")
        # Nothing that runs or launches, and no image interpolation (ISO 19005 forbids both).
        for obj in pdf.objects:
            if isinstance(obj, pikepdf.Dictionary):
                assert not {"/JS", "/JavaScript", "/Launch"} & set(obj.keys())
                assert str(obj.get("/S", "")) not in ("/JavaScript", "/Launch")
                assert obj.get("/Interpolate") is not True
