"""Regions: the allowed set of a theory as facets with certificates, and its geometry."""
