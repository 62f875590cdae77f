"""Frame spec: model and TOML loading/validation."""
