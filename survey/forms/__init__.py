"""Forms, one module per area: fields (shared building blocks), surveys, thermograms,
members, findings and signin. Forms only validate; services write (and audit)."""
