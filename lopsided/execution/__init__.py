"""How cells run: scoring one work unit, driving units through a backend, and the result store."""
