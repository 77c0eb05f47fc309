"""Fleet-scale benchmark: a synthetic fleet on PostgreSQL and each page's cost beside a hand-written reference."""
