"""Files to validated objects: catalogs (CSV), scenarios and link files (TOML)."""
