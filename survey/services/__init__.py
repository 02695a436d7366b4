"""Domain writes, one module per area: surveys (ingest, conditions), marks, findings, audit."""
