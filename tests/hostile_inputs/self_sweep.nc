# Invented hostile input for fdsolver's test corpus; it describes no real device.
# Checks: a sweep case named .nc, the target of out_sweep_is_case_file
title = "Double square well (invented)"
units = "nm-meV"
mass = 0.067

[params]
d = 2.0
width = 3.0
depth = 100.0

[[potential]]
name = "left well"
shape = "square"
center = "-(d + width) / 2"
width = "width"
depth = "depth"

[[potential]]
name = "right well"
shape = "square"
center = "(d + width) / 2"
width = "width"
depth = "depth"

[solve]
tolerance = 1e-6

[sweep]
units = { d = "nm", width = "nm", depth = "meV" }
