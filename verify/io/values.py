"""Force cells of a claimed table, as people actually write them.

Accepted, with the reading each gets (tension positive once a T/C suffix settles the sign):

- signed numbers ``-12.4``, ``+3``, ``1e3``; Unicode minus and dashes (− – —) read as a minus;
- a T/C suffix ``12.4 C``, ``12.4T``, ``12.4 (C)``, ``12.4 tension``: T gives +|v|, C gives -|v|;
  ``-12.4 C`` is read as compression (the minus is redundant, not contradictory), but ``-12.4 T``
  contradicts itself and is refused;
- accounting parentheses ``(12.4)`` for a negative number;
- thousands separators in consistent groups of three: ``1,234.5``, ``1 234.5``, ``1'234.5`` (and
  ``1.234,5`` / ``1 234,5`` where the table uses decimal commas);
- a decimal comma ``12,4`` where the table uses decimal commas (a ``;``-separated CSV);
- a force unit in the cell, before or after the T/C suffix: ``12.4 kN``, ``3.1kip``, ``12.4 kN C``.

Refused with a message (never read as zero): text longer than MAX_FORCE_CHARS (quoted cut short),
empty text, spreadsheet error values and NaN words
(``nan``, ``#N/A``, ``#VALUE!``), infinities, a lower-case ``t``/``c`` suffix (``t`` may mean
tonnes), separators that fit no grouping (``12,4.0``), and a comma that could be a decimal or a
thousands separator when the table's convention does not settle it.
"""

from __future__ import annotations

import math
import re

from verify.units import Dimension, lookup_unit

# Characters read as a minus sign: U+2212 minus, U+2012 figure dash, U+2013 en dash, U+2014 em
# dash, U+FE63 small hyphen-minus, U+FF0D fullwidth hyphen-minus.
MINUS_SIGNS = "\u2212\u2012\u2013\u2014\ufe63\uff0d"
# Spaces people (and spreadsheets) put between digit groups: space, no-break, thin, narrow no-break.
GROUP_SPACES = " \u00a0\u2009\u202f"
GROUP_APOSTROPHES = "'\u2019"

# Texts that spreadsheets and data tools write for a missing or failed value (compared lower-case).
# fmt: off
NAN_TEXTS = frozenset(
    {
        "nan", "-nan", "+nan", "na", "n/a", "#n/a", "#na", "null", "none",
        "#value!", "#div/0!", "#ref!", "#name?", "#num!", "#null!", "#getting_data", "#spill!",
        "#calc!", "#field!", "#unknown!", "#blocked!", "#connect!", "#busy!",
        "inf", "+inf", "-inf", "infinity", "+infinity", "-infinity", "#inf", "1.#inf", "-1.#inf",
    }
)
# fmt: on

_TC_WORDS = {"tension": "T", "compression": "C"}
_TC_TAIL = re.compile(
    r"""(?:\(\s*(?P<paren>[TC]|(?i:tension|compression))\s*\)|(?P<bare>\b(?i:tension|compression)|[TC]))\s*$"""
)
_LOWER_TC_TAIL = re.compile(r"(?:\d|\s|\))(?P<letter>[tc])\s*$")
_UNIT_TAIL = re.compile(r"(?P<unit>[A-Za-z][A-Za-z\-]*)\s*$")
_SCIENTIFIC = re.compile(r"^(\d+(?:\.\d*)?|\.\d+)[eE][+-]?\d+$")


MAX_FORCE_CHARS = 64  # '-1,234,567.125 kN (compression)' is 31: longer text is no force cell
MAX_QUOTED_CHARS = (
    60  # a cell quoted in a message is cut here: a 40 KB cell must not fill the screen
)
TAIL_CHARS = 32  # T/C letters and units are read from this many final characters only

NORMALIZE_TABLE = _NORMALIZE = str.maketrans(
    {**dict.fromkeys(MINUS_SIGNS, "-"), **dict.fromkeys(GROUP_SPACES[1:], " ")}
)
PLAIN_NUMBER = re.compile(r"[+-]?\d+(?:\.\d+)?(?:[eE][+-]?\d+)?")


def normalize_text(text: str) -> str:
    """Minus-like dashes to '-', no-break and thin spaces to ' ', outer whitespace removed."""
    return text.translate(_NORMALIZE).strip()


def is_nan_text(text: str) -> bool:
    """True for the words and error codes that stand for a missing or failed value."""
    return normalize_text(text).lower() in NAN_TEXTS


def quoted(text: str) -> str:
    """A cell as a message shows it: control characters escaped, text past MAX_QUOTED_CHARS cut."""
    shown = (
        text
        if len(text) <= MAX_QUOTED_CHARS
        else f"{text[:MAX_QUOTED_CHARS]}... ({len(text):,} characters)"
    )
    if any(ch < " " or "\x7f" <= ch < "\xa0" for ch in shown):
        shown = shown.encode("unicode_escape").decode("ascii")
    return shown


def _expectation(original: str) -> str:
    return f"force '{quoted(original)}' is not a number with an optional T/C suffix"


MAX_FORCE = 1e15  # 10^15 N is a thousand times the weight of the largest structure ever built
MIN_FORCE = (
    1e-290  # smaller non-zero values are subnormal floats, whose quotients overflow; round-off
)
#                     such as 7.1e-16, as analysis programs export it, is kept as written


def in_force_range(value: float) -> bool:
    """Finite, and 0 or of a size any force table could hold (so no comparison can overflow)."""
    size = abs(value)
    return math.isfinite(value) and (size == 0 or MIN_FORCE <= size <= MAX_FORCE)


def plain_number(text: str, *, decimal_comma: bool = False) -> float | None:
    """The common cell, read directly: a signed decimal (exponent allowed) with nothing else to
    interpret; None for anything else, an overflow (1e400) included, which parse_force_cell words.
    With decimal commas, '1.250' groups thousands and is left to parse_force_cell too."""
    if not PLAIN_NUMBER.fullmatch(text) or (decimal_comma and "." in text):
        return None
    number = float(text)
    return number if in_force_range(number) else None


def parse_force_cell(text: str, *, decimal_comma: bool = False) -> tuple[float, bool, str | None]:
    """(value, sign_fixed, unit symbol or None); ValueError with a message on bad text.

    `decimal_comma` says the table writes ',' as the decimal point (a ';'-separated CSV); then '.'
    and spaces may group thousands. Otherwise '.' is the decimal point and ',' groups thousands.
    """
    original = str(text).strip()
    number, letter, unit = read_force_cell(text, decimal_comma=decimal_comma)
    if letter == "T":
        if number < 0:
            raise ValueError(
                f"force '{quoted(original)}' is negative but marked T (tension); write the "
                "magnitude with T, or a signed number without T/C"
            )
        return abs(number), True, unit
    if letter == "C":
        return -abs(number), True, unit
    return number, False, unit


def read_force_cell(
    text: str, *, decimal_comma: bool = False
) -> tuple[float, str | None, str | None]:
    """(the number with its sign as written, the T/C letter or None, unit symbol or None).

    Sign and letter are returned apart so that a table writing both ('-121.39 T' in a table
    that writes compression positive) can be read under its own convention."""
    original = str(text).strip()
    if len(original) > MAX_FORCE_CHARS:
        # Bounded before any pattern runs: the tail patterns below would otherwise be tried at
        # every position of an 80 KB cell.
        raise ValueError(
            f"force '{quoted(original)}' is {len(original):,} characters long (limit "
            f"{MAX_FORCE_CHARS}); a force cell holds a number with an optional unit and T/C letter"
        )
    number = plain_number(original, decimal_comma=decimal_comma)
    if number is not None:
        return number, None, None
    s = normalize_text(str(text))
    if not s:
        raise ValueError("force is empty; leave the cell blank when there is no claim")
    if s.lower() in NAN_TEXTS:
        raise ValueError(
            f"force '{quoted(original)}' is not a number (a missing value or spreadsheet error); "
            "leave the cell blank when there is no claim, or give the value"
        )

    tc: str | None = None
    unit: str | None = None
    # The T/C suffix and the unit may come in either order ("12.4 kN C", "12.4 C kN").
    for _ in range(2):
        if tc is None:
            m = _TC_TAIL.search(s)
            if m and m.start() > 0:
                word = (m.group("paren") or m.group("bare")).lower()
                tc = _TC_WORDS.get(word, word.upper())
                s = s[: m.start()].rstrip()
                continue
        if unit is None:
            low = _LOWER_TC_TAIL.search(s)
            if low and tc is None:
                letter = low.group("letter")
                raise ValueError(
                    f"{_expectation(original)}: write '{letter.upper()}' for "
                    f"{'tension' if letter == 't' else 'compression'} (a lower-case '{letter}' "
                    "may be read as a unit)"
                )
            m = _UNIT_TAIL.search(s)
            if m and m.start() > 0:
                word = m.group("unit")
                try:
                    unit = lookup_unit(word, Dimension.FORCE).symbol
                except ValueError as exc:
                    raise ValueError(f"{_expectation(original)}: {exc}") from None
                s = s[: m.start()].rstrip()
                continue
        break

    negative = False
    accounting = False
    if s.startswith("(") and s.endswith(")"):
        accounting = True
        negative = True
        s = s[1:-1].strip()
    if s[:1] in "+-" and s:
        if accounting:
            raise ValueError(
                f"{_expectation(original)}: parentheses already mean negative; drop the sign"
            )
        negative = s[0] == "-"
        s = s[1:].strip()
    magnitude = _parse_magnitude(s, decimal_comma=decimal_comma, original=original)
    if not in_force_range(magnitude):
        raise ValueError(
            f"force '{quoted(original)}' is out of range: a claimed force must be 0 or between "
            f"{MIN_FORCE:g} and {MAX_FORCE:g} in size, in any unit"
        )

    return (-magnitude if negative else magnitude), tc, unit


def _parse_magnitude(s: str, *, decimal_comma: bool, original: str) -> float:
    """An unsigned number with optional digit grouping, per the table's decimal convention."""
    if not s:
        raise ValueError(_expectation(original))
    if _SCIENTIFIC.match(s):
        return float(s)
    if decimal_comma and re.fullmatch(r"(\d+(?:,\d*)?|,\d+)[eE][+-]?\d+", s):
        return float(s.replace(",", "."))
    decimal, thousands_marks = (",", ".") if decimal_comma else (".", ",")
    separators = thousands_marks + GROUP_SPACES[0] + GROUP_APOSTROPHES
    if re.fullmatch(r"\d+", s):
        return float(s)
    # Plain decimal in the table's own convention.
    m = re.fullmatch(rf"(\d*)\{decimal}(\d*)", s)
    if m and (m.group(1) or m.group(2)):
        return float(f"{m.group(1) or '0'}.{m.group(2) or '0'}")
    # Grouped thousands: one kind of separator, groups of exactly three digits.
    for sep in separators:
        # Space- or apostrophe-grouped numbers settle the decimal mark themselves: '1 234,5' and
        # '1 234.5' can each be read only one way, whatever the table's convention.
        marks = "[.,]" if sep in GROUP_SPACES + GROUP_APOSTROPHES else rf"\{decimal}"
        m = re.fullmatch(rf"(\d{{1,3}}(?:{re.escape(sep)}\d{{3}})+)(?:{marks}(\d*))?", s)
        if m:
            if decimal_comma and sep == "." and m.group(2) is None and m.group(1).count(".") == 1:
                raise ValueError(
                    f"force '{quoted(original)}' is ambiguous: in a table with decimal commas '.' "
                    "groups thousands, but it may be a decimal point here; write it without "
                    "grouping"
                )
            whole = m.group(1).replace(sep, "")
            return float(f"{whole}.{m.group(2) or '0'}")
    if decimal_comma and re.fullmatch(r"\d+\.\d+", s):
        # A decimal point in a decimal-comma table: unambiguous when it cannot be a thousands group.
        return float(s)
    if not decimal_comma and re.fullmatch(r"\d+,\d+", s):
        raise ValueError(
            f"{_expectation(original)}: ',' is neither a thousands separator (groups of three "
            "digits) nor the decimal point of this table; write a decimal point"
        )
    raise ValueError(_expectation(original))
