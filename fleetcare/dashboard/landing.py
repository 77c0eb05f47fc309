"""Where a person lands: the one rule behind signing in (/start/) and the site's front page (/)."""
from fleetcare.accounts.roles import SUPERVISOR, has_role


def sees_overview(user):
    """Supervisors and up work from the fleet overview; the crew work from today's work, which loads no charts."""
    return has_role(user, SUPERVISOR)


def landing(user):
    """The URL name a person lands on: the overview, or today's work (at the site this tablet last opened)."""
    return "dashboard:home" if sees_overview(user) else "planner:home"
