"""relativity stage."""
