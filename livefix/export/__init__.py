"""Live exports for fleets and benches (Prometheus metrics)."""
