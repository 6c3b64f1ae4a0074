"""The colours that carry meaning on screen, in one place (hex: named colours are remapped by themes).

Colour is never the only cue: every coloured thing also has a word, letter or symbol (ALARM, WARN, ▲ …).
Widget backgrounds and borders are in ``fieldpad.tcss``; these are for text drawn by the screens."""

ALARM = "#ff5050"  # alarms, wrong rotation, a value that cannot be understood
WARN = "#ffb000"  # warnings, a change between rounds, CORRECTING / READ-ONLY
INFO = "#9ecbff"  # information, a typed value understood
MUTED = "#8a8a8a"  # hints, thresholds and sources
PREVIOUS = "#b0a0ff"  # the previous reading shown beside the current one
ON_ALARM = "bold #ffffff on #b00020"  # a tag or cell marked as an alarm or a refused value
ON_WARN = "bold #000000 on #ffb000"
