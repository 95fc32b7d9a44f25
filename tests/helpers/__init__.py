"""Test-only code: independent references the tests hold gcplan to, and writers of test inputs."""
