"""vascplan: arterial access planning and limb-perfusion surveillance (decision support)."""

__version__ = "0.1.0"
