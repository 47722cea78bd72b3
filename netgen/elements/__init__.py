"""Element kinds, one module each, and the registry that lists them."""
