"""Reports: figures, cautions and the check report of a fit against a region."""
