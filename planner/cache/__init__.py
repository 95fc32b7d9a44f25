"""On-disk caches between runs (shell code): files in the user's cache folder, never required."""
