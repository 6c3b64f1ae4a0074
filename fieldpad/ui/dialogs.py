"""Small modal screens: yes/no question, a reason to type, the help page, a text page."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Input, Static

from .field_input import FieldInput, TypingTargetScreen
from .key_strip import KeyStrip
from .palette import ALARM

HELP = """\
[b]fieldpad — keys[/b] (everything works from the keyboard)

[b]Board list[/b]
  Enter   open the board's reading sheet
  MSB2    type a name (capitals, digits) to go to it;  /  go to
  Home / End   first / last board;  ▲ ALARM / △ WARN: latest reading
  n / e   new board / edit board (arc-flash label, own standard)
  r       start (named) or finish a round    h   board history
  v       day review                   s   sites
  y       sync with the crew's server (if one is set)
  q       quit

[b]Reading sheet[/b]
  Tab, Enter   next field: A, B, C (magnitude, angle), then N
               (VA's angle is skipped: blank, it is the 0° reference)
  Shift+Tab    previous field;  arrows: any cell, VA's angle too
  typing       in a field just entered, replaces its value
  Backspace    edit the value;  Delete: clear the field
  F2, Ctrl+S   save: committed at once, the status line says so
  F3  previous reading of this board beside the results
  F4  history of this board (correct, void; old versions kept)
  F5  entry: line-to-neutral / line-to-line + angles / LL only
      (values with no cell in a mode are kept aside, or converted)
  F6  right panel: phasors / voltage triangle / per-phase power /
      findings in full
  F7  put back the draft kept for this board
  F8  note for this reading;  F9  instrument used
  Ctrl+L  clear the sheet (asks first; saved readings untouched)
  Esc back (asks first if typed values are not saved)
  Ctrl+P  command palette;  F1  this help

[b]Day review[/b]
  f  findings only    b / t  filter by board / technician
  o  change the sort  [ ]    previous / next day
  Enter  a reading in full;  c  compare rounds;  x  export
  s  sign off the day or a round (name, note): a record
     of its own; * marks a reading changed after it

[b]Typing values[/b]
  277  277.5  277,5  277V  13.8kV  12A
  angles: -120  240  30 lag  30 lead  -120°
  Angles are counter-clockwise positive, relative to VA
  (leave VA's angle empty: it is the 0° reference).
  Results: typed = measured, calc = computed from the
  phasors, est = estimated from the magnitudes alone.
  A half-typed sheet is kept and offered back next time.

[b]Safety[/b]
  fieldpad never shows that equipment is safe. Work on or
  near energised equipment only as a qualified person, under
  the site's energised-work permit, with the PPE the board's
  arc-flash label calls for. Local codes and licensed
  practice govern.

Esc to close.
"""


class Ask(ModalScreen[bool]):
    """A yes/no question."""

    BINDINGS = [
        Binding("y", "answer(True)", "Yes"),
        Binding("n", "answer(False)", "No"),
        Binding("escape", "answer(False)", "No"),
    ]

    def __init__(self, question: str) -> None:
        super().__init__()
        self.question = question

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog"):
            yield Static(self.question, classes="question")
            yield Static("[b]y[/b] yes    [b]n[/b] / Esc no", classes="hint")

    def action_answer(self, value: bool) -> None:
        self.dismiss(value)


class AskText(TypingTargetScreen, ModalScreen[str | None]):
    """Ask for a line of text (a reason, a filter); Esc cancels."""

    BINDINGS = [Binding("escape", "cancel", "Cancel")]

    def __init__(self, question: str, placeholder: str = "", required: bool = True, value: str = "") -> None:
        super().__init__()
        self.question = question
        self.placeholder = placeholder
        self.required = required
        self.value = value

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog"):
            yield Static(self.question, classes="question")
            yield FieldInput(value=self.value, placeholder=self.placeholder, id="answer", max_length=2000)
            yield Static("Enter to confirm, Esc to cancel", classes="hint", id="answer-hint")

    def on_mount(self) -> None:
        self.query_one(Input).focus()

    def on_input_submitted(self, event: Input.Submitted) -> None:
        text = event.value.strip()
        if self.required and not text:
            self.query_one("#answer-hint", Static).update(f"[b {ALARM}]An answer is required.[/] Esc to cancel.")
            return
        self.dismiss(text)

    def action_cancel(self) -> None:
        self.dismiss(None)


def AskReason(question: str) -> AskText:
    """A correction or a void needs a reason."""
    return AskText(question, "reason (required)", required=True)


class TextPage(ModalScreen[None]):
    """A page of text (help, a reading's versions)."""

    BINDINGS = [Binding("escape", "close", "Close"), Binding("q", "close", "Close", show=False)]

    def __init__(self, content, title: str = "") -> None:
        super().__init__()
        self.content = content
        self.page_title = title

    def compose(self) -> ComposeResult:
        with VerticalScroll(classes="page"):
            if self.page_title:
                yield Static(f"[b]{self.page_title}[/b]")
            yield Static(self.content)
        yield KeyStrip()

    def action_close(self) -> None:
        self.dismiss(None)


def help_page() -> TextPage:
    return TextPage(HELP, "Help")
