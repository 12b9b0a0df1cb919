"""The application layer: one function per thing a person asks for (CLI and web call it)."""
