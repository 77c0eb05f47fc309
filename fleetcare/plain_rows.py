"""Large reads whose values need no converting, straight from the database driver."""
from django.db import connections


def plain_rows(queryset):
    """The rows of a values_list() queryset. On PostgreSQL they come straight from the driver, whose dates and
    floats are already what Django's converters would return, sparing a Python call per value (read from the
    database the router picked, the replica where a page reads from one); other databases (SQLite gives dates as
    text) go through the converters."""
    database = connections[queryset.db]
    if database.vendor != "postgresql":
        yield from queryset
        return
    sql, params = queryset.query.sql_with_params()
    with database.cursor() as cursor:
        cursor.execute(sql, params)
        yield from cursor.fetchall()
