"""Messages for a name the user gave that the model does not have: what exists, what is close."""

from __future__ import annotations

import difflib
from collections.abc import Iterable, Sequence

#: Valid names listed in a message before the rest are only counted.
SHOWN_NAMES = 8
#: Close matches offered per unknown name.
CLOSE_MATCHES = 3


class UnknownName(LookupError):
    """A name given on the command line that the model does not have.

    Attributes:
        param: the command-line parameter's name as click knows it ("segment", "members_wanted").
        message: what was wrong, the close matches and the names that exist.
    """

    def __init__(self, param: str, message: str) -> None:
        super().__init__(message)
        self.param = param
        self.message = message


def unknown_names_message(
    kind: str, given: Iterable[str], valid: Sequence[str], where: str = ""
) -> str:
    """Say which ``given`` names are not ``valid``, the close matches, and a few valid names.

    Args:
        kind: what the names are, singular ("member", "segment", "load combination").
        given: the unknown names, as the user wrote them.
        valid: every name that exists, in the model's order.
        where: where the user can see them all (such as "'flangewise members MODEL'").
    """
    parts = []
    for name in given:
        close = difflib.get_close_matches(name, valid, n=CLOSE_MATCHES)
        hint = f" (close: {', '.join(close)})" if close else ""
        parts.append(f"no {kind} named '{name}'{hint}")
    return f"{'; '.join(parts)}. {existing(kind, valid, where)}"


def existing(kind: str, valid: Sequence[str], where: str = "") -> str:
    """A sentence listing the first few ``valid`` names and counting the rest."""
    if not valid:
        return f"The model has no {kind}."
    if len(valid) == 1:
        return f"The only {kind} is {valid[0]}."
    shown = ", ".join(valid[:SHOWN_NAMES])
    more = f" and {len(valid) - SHOWN_NAMES} more" if len(valid) > SHOWN_NAMES else ""
    see = f"; {where} lists them all" if where and more else ""
    return f"The {len(valid)} {kind}s are: {shown}{more}{see}."
