"""clocks stage."""
