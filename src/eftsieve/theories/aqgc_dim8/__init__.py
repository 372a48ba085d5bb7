"""Theory plug-in package; physics in operators.py, conventions.py; adapter theory.py."""
