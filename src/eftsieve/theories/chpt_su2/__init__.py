"""theories/chpt_su2."""
