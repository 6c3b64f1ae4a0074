"""A text field for the forms that never lets a fast typist's keys land in the wrong field.

Characters typed in the same burst as Tab can reach the field being left,
because Textual moves focus after the Tab key is handled.  Here Tab and
Shift+Tab pick the next field at once and record it on the screen as the
"typing target"; a character that still arrives at the old field is passed on
to the target instead (or dropped if the target is not a text field).  Screens
with such fields keep that target by being a :class:`TypingTargetScreen`.

Editing keys (Backspace, Delete, arrows, Home, End) are run by the field at
once (Input's own bindings for them act only after the key has bubbled up to
the app, behind the characters typed after it) and, in the same burst as a
Tab, passed on to the target, in the order they arrive: ``X1 Tab loc
Shift+Tab Backspace ZZ`` gives "XZZ" in the first field and "loc" in the
second, however fast the keys come.

Only Textual's public handlers are used: ``on_key`` here runs before the
``Input``'s own key handling, which ``prevent_default()`` skips.
"""

from __future__ import annotations

from textual import events
from textual.widget import Widget
from textual.widgets import Input

#: Editing keys and the Input action each one runs (Textual's own key bindings for them).
EDIT_ACTIONS = {
    "backspace": "action_delete_left",
    "delete": "action_delete_right",
    "left": "action_cursor_left",
    "right": "action_cursor_right",
    "home": "action_home",
    "end": "action_end",
}


class TypingTargetScreen:
    """Mixed into a screen whose fields are FieldInputs: the field that typed characters belong to."""

    typing_target: Widget | None = None


class FieldInput(Input):
    def __init__(self, *args, **kwargs) -> None:
        kwargs.setdefault("compact", True)
        # Selecting the text on focus would let the next key replace what was already passed on.
        kwargs.setdefault("select_on_focus", False)
        super().__init__(*args, **kwargs)

    def on_key(self, event: events.Key) -> None:
        screen = self.screen
        if not isinstance(screen, TypingTargetScreen):
            return  # Input's own handling follows
        target = screen.typing_target
        pending = target is not None and target is not self and target.is_attached
        if pending and event.is_printable and event.character:
            if isinstance(target, Input):
                target.insert_text_at_cursor(event.character)
            event.stop()
            event.prevent_default()
            return
        if event.key in EDIT_ACTIONS:
            # Run here, at once: left to Input's key bindings, the key would first bubble up to the app
            # and act after the characters typed behind it (a fast "Backspace Z Z" lost a Z instead).
            field = target if pending else self
            if isinstance(field, Input):
                getattr(field, EDIT_ACTIONS[event.key])()
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
        # Otherwise Input's own key handling follows.

    def on_focus(self, event: events.Focus) -> None:
        if isinstance(self.screen, TypingTargetScreen):
            self.screen.typing_target = self
