"""The window's panels, one widget per file: equation, domain, data, pins, pockets, layers, notes."""
