"""Citations are citations: how far the developers confirmed one is kept beside it, not in it
(a signed dossier prints the citation; issue 21 item 7)."""

from calcs.constants import REFERENCES, UNCONFIRMED


def test_no_citation_says_how_it_was_looked_up():
    assert not [key for key, text in REFERENCES.items() if "memory" in text.lower()]


def test_every_unconfirmed_note_belongs_to_a_citation():
    assert set(UNCONFIRMED) <= set(REFERENCES)
