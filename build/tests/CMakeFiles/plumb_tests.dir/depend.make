# Empty dependencies file for plumb_tests.
# This may be replaced when dependencies are built.
