# Invented hostile input for fdsolver's test corpus; it describes no real device.
# Checks: a case file named .nc, the target of the out_is_case_file entries
title = "Square well (invented)"
units = "nm-meV"
mass = 0.067

[params]
width = 3.0
depth = 100.0

[[potential]]
name = "well"
shape = "square"
center = 0.0
width = "width"
depth = "depth"
