"""Text from the data made safe for Markdown: shown as typed, never as markup or a link.

Streamlit-free, so the pages (through :mod:`explorer.ui`) and the command line's Markdown
output escape names the same way.
"""

from __future__ import annotations

import re
from typing import Any

__all__ = ["WORD_JOINER", "plain"]

# Every ASCII punctuation character may be backslash-escaped in CommonMark; these are the
# ones that start Markdown, HTML, Streamlit's colour and icon directives (":red[...]",
# ":material/...:"), emoji shortcodes, LaTeX ("$") and GitHub-style autolinks ("www.").
_MARKUP = re.compile(r"([\\`*_{}\[\]!|<>~$:&^])")
# Characters that start a block (heading, list, quote, rule) only where a line begins; a
# shown text is one line, so only its first characters need them escaped. Escaping them
# everywhere would put backslashes into the labels that screen readers read out.
_BLOCK_START = re.compile(r"^([#+\-=>]|\d+(?=[.)]))")


#: U+2060, invisible; it splits an address so that it is not made into a link.
WORD_JOINER = "\u2060"
_AUTOLINK = re.compile(r"(?<=:)(?=//)|(?i:(?<=www))(?=\.)|(?<=@)(?=\w)")


def plain(text: Any) -> str:
    """Text from a file, a link or a view file, escaped so that Markdown shows it as typed.

    Streamlit renders Markdown in titles, captions, notices, metric labels and help texts;
    a district called ``![x](http://host/x.png)`` would otherwise make every viewer's
    browser fetch that image. Line breaks become spaces (a name is one line), and a word
    joiner (U+2060, invisible) goes into bare web and mail addresses so none becomes a link.

    References
    ----------
    MacFarlane, J. (2019). CommonMark Spec, version 0.29, section 2.4 "Backslash escapes":
    any ASCII punctuation character may be backslash-escaped.
    """
    one_line = " ".join(str(text).split())
    # GitHub-style Markdown links bare addresses even when escaped ("http\\://x" is still a
    # link); an invisible word joiner inside "://", "www." and "@name" stops that.
    one_line = _AUTOLINK.sub(WORD_JOINER, one_line)
    escaped = _MARKUP.sub(r"\\\1", one_line)
    return _BLOCK_START.sub(
        lambda m: "\\" + m.group(1) if not m.group(1).isdigit() else m.group(1) + "\\", escaped
    )
