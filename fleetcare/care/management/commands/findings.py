import json

from django.core.management.base import BaseCommand, CommandError

from fleetcare.care import detection
from fleetcare.care.models import Finding
from fleetcare.fleet.models import Site


def as_json(finding):
    return {
        "battery": finding.battery.serial,
        "site": finding.battery.site.code,
        "kind": finding.kind,
        "kind_label": finding.get_kind_display(),
        "state": finding.state,
        "severity": finding.severity,
        "positions": finding.positions,
        "position_kind": "block" if finding.battery.profile.reads_by_block else "cell",
        "persistent": finding.persistent,
        "opened_at": finding.opened_at.isoformat(),
        "last_seen_at": finding.last_seen_at.isoformat(),
        "summary": finding.summary,
        "acknowledged_comment": finding.acknowledged_comment,
        "evidence": finding.evidence,
    }


class Command(BaseCommand):
    help = "Check the whole fleet (or one site) for findings, then list every open or acknowledged finding."

    def add_arguments(self, parser):
        parser.add_argument("--json", action="store_true", help="Print the findings as a JSON list.")
        parser.add_argument("--site", help="Only this site (its code, e.g. hrw).")
        parser.add_argument("--no-check", action="store_true", help="List the stored findings without checking first.")

    def handle(self, *args, json: bool = False, site=None, no_check=False, **options):
        site_obj = None
        if site:
            site_obj = Site.objects.filter(code=site).first()
            if site_obj is None:
                raise CommandError(f"No site with code {site!r}.")
        if not no_check:
            detection.detect_fleet(site=site_obj, answer=False)
        findings = Finding.objects.active().select_related("battery", "battery__site", "battery__profile")
        if site_obj is not None:
            findings = findings.filter(battery__site=site_obj)
        findings = list(findings.order_by("battery__serial", "kind"))
        if json:
            self.stdout.write(_dumps([as_json(f) for f in findings]))
            return
        for f in findings:
            where = f" {f.position_label}" if f.positions else ""
            self.stdout.write(f"{f.battery.serial:<12} {f.get_kind_display()}{where} [{f.get_state_display()}]: {f.summary}")
        self.stdout.write(f"{len(findings)} open finding{'s' if len(findings) != 1 else ''}.")


def _dumps(data):
    return json.dumps(data, indent=2, ensure_ascii=False)
