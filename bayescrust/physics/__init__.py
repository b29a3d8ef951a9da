"""Pure, vectorised mineral and rock physics (no I/O, no randomness, no plotting)."""
