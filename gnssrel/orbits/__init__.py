"""orbits stage."""
