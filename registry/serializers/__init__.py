"""API representations of the register's records (one module per topic)."""
