# Empty compiler generated dependencies file for plumb.
# This may be replaced when dependencies are built.
