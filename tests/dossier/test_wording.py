"""A signed dossier cites its sources and says things in plain words (issue 21 item 7)."""

from __future__ import annotations

import re

from tests.dossier.helpers import page_texts


def test_no_page_of_the_dossier_says_from_memory(issued_data):
    # A committee signs this document: a source is cited, or the rule is named as the site's
    # own convention; how far the developers confirmed a citation stays in the code.
    text = " ".join(page_texts(issued_data["pdf"]))
    assert not re.search(r"memory", text, re.I), re.search(r".{80}memory.{40}", text, re.I)


def test_the_class_legend_and_the_audit_section_are_in_plain_words(issued_data):
    text = " ".join(page_texts(issued_data["pdf"]))
    assert "MTT is not a barrier needed" not in text
    assert "no barrier at MTT is needed" in text
    # The audit section says what the head hash is for and how to check it.
    assert "manage.py verify" in text


def test_labels_of_older_snapshots_print_without_the_lookup_note():
    # Snapshots frozen before the labels cited their chapter still carry the old wording.
    from hazards.dossier.view import cited, parameter_row

    assert cited("probability 6-level (Stoessel 2008 after Gygax, from memory)") == (
        "probability 6-level (Stoessel 2008 after Gygax)")
    assert cited("J. Therm. Anal. 11 (1977) 445-447 (bibliographic details from memory).") == (
        "J. Therm. Anal. 11 (1977) 445-447.")
    assert parameter_row("probability_scale", "severity 3-level (Stoessel 2008, from memory)")[
        "value"] == "severity 3-level (Stoessel 2008)"



def test_no_page_of_the_dossier_uses_a_retired_word_for_the_approval(issued_data):
    # One vocabulary (issue 21 item 5; DEVELOPERS.md, "Words"): approve / approved / approval.
    text = " ".join(page_texts(issued_data["pdf"]))
    assert not re.search(r"endors", text, re.I), re.search(r".{80}endors.{40}", text, re.I)
    assert "Approved by the safety committee" in text  # the state of the signed revision
