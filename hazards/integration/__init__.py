"""Integration with other systems: idempotency keys of API POSTs and service-account tooling."""
