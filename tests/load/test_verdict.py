"""The load test's own bookkeeping: what counts as a pass (the load run itself is tests/load/run_load.py, not pytest)."""
from tests.load.run_load import Stats, import_overlap, latency_ms, percentile, verdict

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


class _Import:
    upload_s, running_after_s, at_running = 0.2, 11.0, {"rows_checked": 10}

    def __init__(self, uploaded_after_s, finished_after_s):
        self.uploaded_after_s, self.finished_after_s = uploaded_after_s, finished_after_s


def _phase_of(posts, started=100.0):
    """A phase whose posts are (start, end) in seconds into the phase."""
    stats = Stats()
    for start, end in posts:
        stats.latency["post"].append(end - start)
        stats.ended_at["post"].append(started + end)
    return {"stats": stats, "started": started}


def test_a_post_counts_as_beside_the_import_when_any_part_of_it_overlaps_the_import():
    posts = [(1.0, 1.5),    # in the tablets' start: in neither
             (6.0, 6.1),    # before the upload: the reference
             (9.5, 10.2),   # began before the upload, ended during it: beside the import
             (12.0, 12.2),  # during
             (19.9, 20.4),  # began during, ended after: beside
             (21.0, 21.3)]  # after: the reference
    overlap = import_overlap(_phase_of(posts), _Import(10.0, 20.0), ramp_s=5.0, seconds=60)
    assert overlap["inspection_post_while_importing_ms"]["count"] == 3
    assert overlap["inspection_post_while_importing_ms"]["p95"] == 700.0
    assert overlap["inspection_post_rest_of_phase_ms"]["count"] == 2
    assert overlap["inspection_post_rest_of_phase_ms"]["p95"] == 300.0
    assert overlap["finished_within_the_phase"] is True


def test_an_import_not_seen_finished_counts_every_later_post_as_beside_it():
    overlap = import_overlap(_phase_of([(6.0, 6.1), (30.0, 30.4), (59.0, 59.2)]), _Import(10.0, None),
                             ramp_s=5.0, seconds=60)
    assert overlap["inspection_post_while_importing_ms"]["count"] == 2
    assert overlap["inspection_post_rest_of_phase_ms"]["count"] == 1
    assert overlap["finished_within_the_phase"] is False
