"""Theory plug-in package; physics in operators.py, adapter in theory.py."""
