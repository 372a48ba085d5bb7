"""theories/scalar_eft."""
