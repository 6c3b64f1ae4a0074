"""A text field for the forms that never lets a fast typist's keys land in the wrong field.

Characters typed in the same burst as Tab can reach the field being left,
because Textual moves focus after the Tab key is handled.  Here Tab and
Shift+Tab pick the next field at once and record it on the screen as the
"typing target"; a character that still arrives at the old field is passed on
to the target instead (or dropped if the target is not a text field).
"""
from __future__ import annotations

from textual import events
from textual.widgets import Input


class FieldInput(Input):
    def __init__(self, *args, **kwargs) -> None:
        kwargs.setdefault("compact", True)
        # Selecting the text on focus would let the next key replace what was already passed on.
        kwargs.setdefault("select_on_focus", False)
        super().__init__(*args, **kwargs)

    async def _on_key(self, event: events.Key) -> None:
        screen = self.screen
        target = getattr(screen, "typing_target", None)
        pending = target is not None and target is not self and target.is_attached
        if pending and event.is_printable and event.character:
            if isinstance(target, Input):
                target.insert_text_at_cursor(event.character)
            event.stop()
            event.prevent_default()
            return
        if event.key in ("tab", "shift+tab"):
            chain = screen.focus_chain
            base = target if pending else self  # a Tab in the same burst moves on from the pending field
            if base in chain and len(chain) > 1:
                step = 1 if event.key == "tab" else -1
                nxt = chain[(chain.index(base) + step) % len(chain)]
                screen.typing_target = nxt
                screen.set_focus(nxt)
                event.stop()
                event.prevent_default()
                return
        await super()._on_key(event)

    def _on_focus(self, event: events.Focus) -> None:
        self.screen.typing_target = self
        super()._on_focus(event)
