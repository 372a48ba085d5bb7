"""theories/chpt_su3."""
