"""The application layer: one function per thing a person asks for; each returns a typed
result that a face (terminal, web) renders. The CLI and the web pages both call it."""
