# Empty compiler generated dependencies file for plumb_core.
# This may be replaced when dependencies are built.
