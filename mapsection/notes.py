"""What a stage has to say while it works: one object for the log and the warnings.

A :class:`Notes` keeps the lines that go into a section's ``build.log`` (its
``entries``) and passes warnings, the notes the geologist must see now, to a
callback (the command line prints ``mapsection: warning: ...``; the library's
default raises a :class:`mapsection._messages.MapsectionWarning`).

Examples
--------
>>> from mapsection.notes import Notes
>>> shown = []
>>> notes = Notes(shown.append)
>>> notes.log("method: kink")
>>> notes.warn("block 1 has no dips")
>>> notes.entries
['method: kink', 'block 1 has no dips']
>>> shown
['block 1 has no dips']
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

from ._messages import default_warn

Warn = Callable[[str], None]


@dataclass(eq=False)
class Notes:
    """The log of a stage (``entries``) and where its warnings go (``on_warning``).

    ``on_warning`` defaults to :func:`mapsection._messages.default_warn`.
    """

    on_warning: Warn | None = None
    entries: list[str] = field(default_factory=list)

    def log(self, message: str) -> None:
        """Keep ``message`` for the log (build.log); the user is not interrupted."""
        self.entries.append(message)

    def warn(self, message: str, *, logged: bool = True) -> None:
        """Show ``message`` to the user now and (unless ``logged`` is False) log it too."""
        (self.on_warning or default_warn)(message)
        if logged:
            self.entries.append(message)


__all__ = ["Notes", "Warn"]
