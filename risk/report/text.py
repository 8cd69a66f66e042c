"""User text on the terminal: titles, sources, input names, file and folder names.

Anything that came from a scenario, a results file or a path is shown as the characters it
holds. Control characters become visible escapes (:func:`risk.errors.visible`: ESC is printed
as ``\\x1b``), and rich's markup (``[bold]``, ``[/]``) and emoji codes (``:warning:``) in it are
not interpreted: :func:`safe` returns a :class:`rich.text.Text`, which rich prints as it is.
"""

from __future__ import annotations

from rich.text import Text

from risk.errors import visible

__all__ = ["safe"]


def safe(value: object, style: str = "") -> Text:
    """``value`` as text fit for a rich console: control characters visible, markup and emoji
    codes shown literally, in ``style`` (e.g. ``"bold"``)."""
    return Text(visible(str(value)), style=style)

