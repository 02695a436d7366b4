"""Views, one module per area: pages (surveys, upload), api (workspace JSON), findings."""
