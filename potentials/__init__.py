"""Model potential files shipped with boundkit (installed as boundkit.catalog)."""
