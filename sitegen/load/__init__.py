"""sitegen."""
