"""Headless pass/fail checks: TOML profiles of thresholds over the analysis snapshot."""
