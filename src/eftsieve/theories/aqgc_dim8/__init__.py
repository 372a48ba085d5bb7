"""Theory plug-in package; physics in operators.py, conventions in conventions.py, adapter in theory.py."""
