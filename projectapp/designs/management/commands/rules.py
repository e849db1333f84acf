"""`manage.py rules`: every rule in the registry with its topic, severities, rationale, what it means for the
product, and sources."""

import json
import textwrap

from django.core.management.base import BaseCommand

from rules.registry import RETIRED, RULESET_VERSION, registered_rules


class Command(BaseCommand):
    help = "List every rule of the rule set: id, topic, severities, rationale and sources."
    requires_system_checks: list[str] = []
    requires_migrations_checks = False

    def add_arguments(self, parser):
        parser.add_argument("--format", choices=("text", "json"), default="text", dest="output_format")

    def handle(self, *args, **options):
        rules = registered_rules()
        if options["output_format"] == "json":
            self.stdout.write(json.dumps({
                "ruleset": RULESET_VERSION,
                "rules": [{"id": rule.id, "topic": rule.topic, "severities": list(rule.severities),
                           "title": rule.title, "rationale": rule.rationale, "product_impact": rule.product_impact,
                           "sources": list(rule.sources),
                           "added_in": rule.added_in, "changed_in": rule.changed_in}
                          for rule in rules],
                "retired": [{"id": rule.id, "topic": rule.topic, "retired_in": rule.retired_in,
                             "reason": rule.reason} for rule in RETIRED],
            }, indent=2, ensure_ascii=False))
            return
        self.stdout.write(f"Rule set {RULESET_VERSION}: {len(rules)} rules\n")
        for rule in rules:
            mark = (f" (new in {rule.added_in})" if rule.added_in == RULESET_VERSION else
                    f" (changed in {rule.changed_in})" if rule.changed_in == RULESET_VERSION else "")
            self.stdout.write(f"{rule.id}  {rule.topic:<14} {'/'.join(rule.severities):<24} {rule.title}{mark}")
            for label, text in (("why", rule.rationale), ("for the product", rule.product_impact),
                                ("sources", "; ".join(rule.sources))):
                self.stdout.write(textwrap.fill(f"{label}: {text}", 100, initial_indent=" " * 9,
                                                subsequent_indent=" " * 11))
            self.stdout.write("")
        for rule in RETIRED:
            self.stdout.write(f"{rule.id}  retired in {rule.retired_in}: {rule.reason}")
