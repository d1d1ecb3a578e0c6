"""The terminal app (Textual). Imports the core; the core never imports this."""
