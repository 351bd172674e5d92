"""symbias: closed-form and numeric analysis of transistor bias circuits."""

__version__ = "0.1.0"
