from pathlib import Path

from django.core.management.base import BaseCommand, CommandError

from fleetcare.budget import exports, selectors
from fleetcare.fleet.models import Battery, Site


class Command(BaseCommand):
    help = "Write the replacement budget (every site, or one) as XLSX or CSV, for scheduled exports to finance."

    def add_arguments(self, parser):
        parser.add_argument("--years", type=int, default=5, help="Years ahead (1-10, default 5).")
        parser.add_argument("--format", choices=("xlsx", "csv"), default="xlsx")
        parser.add_argument("-o", "--output", required=True, help="File to write.")
        parser.add_argument("--site", help="Only this site's code.")

    def handle(self, *args, years, format, output, site, **options):
        if not 1 <= years <= 10:
            raise CommandError("--years must be between 1 and 10.")
        batteries = Battery.objects.all()
        scope = "all sites"
        if site:
            found = Site.objects.filter(code=site).first()
            if found is None:
                raise CommandError(f"No site with code “{site}”.")
            batteries = batteries.filter(site=found)
            scope = f"site {found.code}"
        budget, assumptions = selectors.replacement_budget(batteries, years=years)
        path = Path(output)
        if format == "xlsx":
            path.write_bytes(exports.to_xlsx(budget, assumptions, scope))
        else:
            path.write_text(exports.to_csv(budget, assumptions, scope), encoding="utf-8", newline="")
        self.stdout.write(f"{budget.count} replacements, total {budget.total:,.2f} {assumptions.currency}".rstrip()
                          + f", written to {path}")
