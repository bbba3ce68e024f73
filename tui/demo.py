"""The built-in demo opened by ``pulsetherm ui`` without a file (an invented scenario)."""
from __future__ import annotations

__all__ = ["DEMO_TEXT"]

DEMO_TEXT = '''\
# Demo (invented): a two-stage L-band pulsed amplifier.  A GaN final stage on a copper
# flange and a small driver on a copper slug, both soldered to a ceramic-filled
# hydrocarbon board with copper-filled vias, greased to a cold plate at 45 degC.
# Edit any value in the form; the results follow every valid edit.

name = "demo: two-stage pulsed amplifier"
coolant = "45 degC"

[model]
fidelity = "ladder"
grading = "normal"

[waveforms.radar]
kind = "pulses"
peak = "90 W"          # heat during a pulse
width = "200 us"
period = "2 ms"        # 10 % duty

[waveforms.drive]
kind = "pulses"
peak = "6 W"
width = "200 us"
period = "2 ms"

[board]
size = ["50 mm", "40 mm"]

[[board.layers]]
name = "top-copper"
material = "pcb-copper"
thickness = "35 um"

[[board.layers]]
name = "laminate"
material = "hydrocarbon-ceramic"
thickness = "0.508 mm"

[board.layers.vias]
drill = "0.3 mm"
plating = "25 um"
pitch = "0.6 mm"
fill = "pcb-copper"

[[board.layers]]
name = "ground-copper"
material = "pcb-copper"
thickness = "35 um"

[mount.sink]
kind = "fixed"         # cold plate held at the coolant temperature

[[mount.interface]]
name = "grease"
material = "thermal-grease"
thickness = "50 um"

[[devices]]
name = "final"
power = "radar"
footprint = ["0.8 mm", "3.0 mm"]
position = ["0 mm", "0 mm"]
limit = "200 degC"

[[devices.stack]]
name = "die"
material = "sic-4h"
thickness = "100 um"
size = ["1.6 mm", "3.6 mm"]

[[devices.stack]]
name = "attach"
material = "ausn"
thickness = "25 um"
size = ["1.6 mm", "3.6 mm"]

[[devices.stack]]
name = "flange"
material = "cuw-85-15"
thickness = "1.0 mm"
size = ["8 mm", "12 mm"]

[[devices.stack]]
name = "solder"
material = "sac305"
thickness = "50 um"
size = ["8 mm", "12 mm"]

[[devices]]
name = "driver"
power = "drive"
footprint = ["0.5 mm", "1.0 mm"]
position = ["-20 mm", "0 mm"]
limit = "175 degC"

[[devices.stack]]
name = "die"
material = "gaas"
thickness = "100 um"
size = ["1.0 mm", "1.5 mm"]

[[devices.stack]]
name = "slug"
material = "copper"
thickness = "0.5 mm"
size = ["3 mm", "3 mm"]
'''
