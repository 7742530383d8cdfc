"""audit stage."""
