"""Built-in target profiles (shipped as package data)."""
