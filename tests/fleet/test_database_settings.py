import pytest
from django.db import connection

pytestmark = pytest.mark.skipif(connection.vendor != "postgresql", reason="a PostgreSQL connection setting")


def test_postgresql_connections_run_without_the_jit_compiler(db):
    # PostgreSQL's JIT spent 15-20 ms compiling the findings pass's reading query, which then ran in
    # about 50 ms (measured with EXPLAIN ANALYZE on the benchmark fleet); see fleetcare/settings.py.
    with connection.cursor() as cursor:
        cursor.execute("SHOW jit")
        assert cursor.fetchone() == ("off",)
