from pathlib import Path

from django.core.management.base import BaseCommand, CommandError

from fleetcare.fleet.models import Site
from fleetcare.labels import selectors
from fleetcare.labels.sheets import LAYOUTS


class Command(BaseCommand):
    help = "Write a PDF sheet of battery labels (QR code, serial, profile, site, caution) for a site."

    def add_arguments(self, parser):
        parser.add_argument("--site", required=True, help="The site's code.")
        parser.add_argument("--battery", action="append", default=[], metavar="SERIAL",
                            help="Label only this battery (repeat for more); default: every battery not retired.")
        parser.add_argument("--layout", choices=sorted(LAYOUTS), default="a4",
                            help="; ".join(f"{key}: {layout.name}" for key, layout in LAYOUTS.items()))
        parser.add_argument("--base-url", default="",
                            help="Where FleetCare is reached, e.g. https://fleetcare.example.com (default: FLEETCARE_BASE_URL).")
        parser.add_argument("-o", "--output", required=True, metavar="FILE.pdf")

    def handle(self, *args, **options):
        site = Site.objects.filter(code=options["site"]).first()
        if site is None:
            raise CommandError(f"No site with code “{options['site']}”. Codes: {', '.join(Site.objects.values_list('code', flat=True))}.")
        try:
            base = selectors.base_url(override=options["base_url"])
            pdf = selectors.sheet_pdf(site, options["battery"], options["layout"], base)
        except selectors.LabelError as exc:
            raise CommandError(str(exc)) from exc
        Path(options["output"]).write_bytes(pdf)
        count = len(dict.fromkeys(options["battery"])) or len(selectors.batteries_to_label(site))
        self.stdout.write(f"{count} label{'s' if count != 1 else ''} for {site.name} ({LAYOUTS[options['layout']].name}) "
                          f"written to {options['output']}.")
