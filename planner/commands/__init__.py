"""Sub-commands of the gcplan command line, one module each (thin shells over the core)."""
