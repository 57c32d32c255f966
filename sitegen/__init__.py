"""sitegen: publish a card game's archetype guide from deck data."""
__version__ = "0.1.0"
__all__ = ["__version__"]
