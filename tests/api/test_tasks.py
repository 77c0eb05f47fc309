"""GET /api/tasks/today: the planner's tasks for today at the user's sites."""


def test_it_asks_for_the_first_all_cell_reading_of_a_battery_with_none(token_client, battery, other_battery):
    tasks = token_client.get("/api/tasks/today").json()
    mine = [t for t in tasks if t["serial"] == "TW-001"]
    assert ("all_cells", "no all-cell reading on record") in {(t["kind"], t["why"]) for t in mine}
    assert all(t["serial"] != "OT-001" for t in tasks)
    reading = next(t for t in mine if t["kind"] == "all_cells")
    assert reading["entry_url"] == f"/readings/battery/{battery.pk}/inspect/?scope=all&via=today"
    assert reading["site"] == "tw" and reading["vehicle"] == "FL-01"


def test_it_refuses_anonymous_requests(client):
    assert client.get("/api/tasks/today").status_code == 401
