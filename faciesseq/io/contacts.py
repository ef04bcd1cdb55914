"""Contact types: the words a core description uses for the lower contact of a bed.

A contact type is read by the words it holds, in any case and with anything around
them (``Sharp``, ``sharp-based``, ``erosional, scoured``): a sharp or erosional word
(:data:`SHARP_WORDS`, the words :func:`faciesseq.cycles.sharp_contacts` reads as
sharp) or a gradational one (:data:`GRADATIONAL_WORDS`). A contact holding neither is
a word this project cannot read (a typo such as ``shrap``, or a type of its own such
as ``loaded``): validation warns of it and reads it as missing, rather than as a
category of its own that the tract model would learn from a handful of beds.
"""

from __future__ import annotations

__all__ = ["GRADATIONAL_WORDS", "SHARP_WORDS", "known_contact", "known_words"]

#: Words of a contact type that mark it as sharp (abrupt or erosional; common practice
#: of core description); :func:`faciesseq.cycles.sharp_contacts` reads them.
SHARP_WORDS = ("sharp", "erosion", "erosive", "scour", "abrupt", "truncat")
#: Words of a contact type that mark it as gradational (common practice).
GRADATIONAL_WORDS = ("gradation", "gradual", "transition")


def known_contact(text: str) -> bool:
    """Whether a contact type (text, stripped) holds a word of :data:`SHARP_WORDS` or
    :data:`GRADATIONAL_WORDS`, in any case."""
    lower = text.lower()
    return any(word in lower for word in (*SHARP_WORDS, *GRADATIONAL_WORDS))


def known_words() -> str:
    """The known words as a message lists them."""
    return ", ".join((*SHARP_WORDS, *GRADATIONAL_WORDS))
