"""The load test's own bookkeeping: what counts as a pass (the load run itself is tests/load/run_load.py, not pytest)."""
from tests.load.run_load import latency_ms, percentile, verdict

CLEAN_STORE = {
    "stored": 10, "distinct_confirmed": 10, "distinct_sent": 10, "still_pending": 0, "duplicates": 0,
    "not_sent_by_any_tablet": 0, "confirmed_but_missing": 0, "confirmed_with_other_id": 0,
    "incomplete_inspections": 0, "stored_but_never_confirmed": 0,
}


def run(phases, signed_in=2):
    return {"tablets": 2, "sign_in": {"signed_in": signed_in}, "phases": phases}


def phase(name="steady", requests=None, **store):
    return {"phase": name, "requests": requests or {"get 200": 12, "post 302": 12}, "client_errors": [],
            "store": CLEAN_STORE | store}


def test_it_passes_a_run_where_every_confirmed_reading_is_stored_once():
    assert verdict(run([phase(), phase("outage (server)", {"get 500": 3, "post 0": 2, "post 302": 9})])) == []


def test_it_fails_a_doubled_or_lost_reading():
    assert verdict(run([phase(stored=11)])) == ["steady: 11 stored, 10 distinct submissions confirmed"]
    assert verdict(run([phase(confirmed_but_missing=1)])) == ["steady: confirmed_but_missing = 1"]


def test_it_fails_a_steady_phase_with_any_error_but_allows_5xx_during_an_outage():
    assert verdict(run([phase(requests={"post 302": 5, "post 500": 1})])) == [
        "steady: responses other than 200/201/302: {'post 500': 1}"
    ]
    assert verdict(run([phase("outage (server)", {"post 302": 5, "post 500": 1, "post 0": 4})])) == []
    assert verdict(run([phase("outage (server)", {"post 302": 5, "post 400": 1})])) == [
        "outage (server): responses other than 200/201/302/5xx/refused: {'post 400': 1}"
    ]


def test_it_fails_when_a_tablet_could_not_sign_in():
    assert verdict(run([phase()], signed_in=1)) == ["only 1 of 2 tablets signed in"]


def test_it_reports_nearest_rank_percentiles_in_milliseconds():
    seconds = [n / 1000 for n in range(1, 101)]  # 1 ms .. 100 ms
    assert percentile(seconds, 95) == 0.095
    assert latency_ms(seconds) == {"p50": 51.0, "p95": 95.0, "p99": 99.0, "count": 100}
