"""A database connection dropped between requests (restart, failover, idle timeout) does not fail the next request."""
import os
from contextlib import closing

import dj_database_url
import psycopg2
import pytest

from tests.deploy.served import Browser, build_static, load_world, production_server

DATABASE_URL = os.environ.get("DATABASE_URL", "")
pytestmark = pytest.mark.skipif(not DATABASE_URL.startswith("postgres"), reason="terminates PostgreSQL backends")


def admin_connection():
    settings = dj_database_url.parse(DATABASE_URL)
    connection = psycopg2.connect(dbname="postgres", user=settings["USER"], password=settings["PASSWORD"],
                                  host=settings["HOST"], port=settings["PORT"] or 5432)
    connection.autocommit = True
    return connection


@pytest.fixture(scope="module")
def served_database():
    """A database of its own for the served app, named after the test run's."""
    name = dj_database_url.parse(DATABASE_URL)["NAME"] + "_served"
    with closing(admin_connection()) as connection, connection.cursor() as cursor:
        cursor.execute(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')
        cursor.execute(f'CREATE DATABASE "{name}"')
    url = DATABASE_URL.rsplit("/", 1)[0] + "/" + name
    load_world(url, demo=False)
    yield url, name
    with closing(admin_connection()) as connection, connection.cursor() as cursor:
        cursor.execute(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')


@pytest.fixture(scope="module")
def static_root(tmp_path_factory):
    root = tmp_path_factory.mktemp("static")
    build_static(root)
    return root


def terminate_backends(name):
    with closing(admin_connection()) as connection, connection.cursor() as cursor:
        cursor.execute("SELECT count(pg_terminate_backend(pid)) FROM pg_stat_activity "
                       "WHERE datname = %s AND pid <> pg_backend_pid()", [name])
        return cursor.fetchone()[0]


@pytest.mark.parametrize("health_checks", ["1", "0"])
def test_the_next_request_after_the_backends_are_terminated_succeeds(tmp_path, static_root, served_database,
                                                                   health_checks):
    url, name = served_database
    with production_server(tmp_path, database_url=url, workers=1, static_root=static_root,
                           DB_CONN_HEALTH_CHECKS=health_checks) as base:
        browser = Browser(base)
        browser.sign_in("probe")
        assert browser.request("/batteries/")[0] == 200
        assert terminate_backends(name) >= 1  # the worker's kept connection
        statuses = [browser.request("/batteries/")[0] for _ in range(3)]
    if health_checks == "1":
        assert statuses == [200, 200, 200]
    else:  # the control: without the check the first request meets the dead connection
        assert statuses[0] == 500 and statuses[1:] == [200, 200]
