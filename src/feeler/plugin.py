"""pytest plugin for feeler (registered through the pytest11 entry point)."""
