"""`manage.py evaluate DESIGN.json [--format text|json]`: the checklist for a design file.

Exit status (contract): 0 no blocker, 1 at least one blocker, 2 the design or a measurement it names is
invalid (every problem on stderr, each with its path). A rule that could not run (a defect in Earshot, listed
under `rule_failures` and on stderr) also gives 1: an incomplete checklist can't say "no blocker".
"""

import json
import sys
from pathlib import Path

from django.core.management.base import BaseCommand

from rules.design import DesignError, parse_design_text
from rules.evaluate import evaluate
from rules.measurements import attach_measurements, read_beside
from rules.text_report import render_text

EXIT_INVALID = 2


class Command(BaseCommand):
    help = "Evaluate a design file (earshot-design/1) and print its checklist."
    requires_system_checks: list[str] = []
    requires_migrations_checks = False

    def add_arguments(self, parser):
        parser.add_argument("design", help="path to the design JSON file")
        parser.add_argument("--format", choices=("text", "json"), default="text", dest="output_format")

    def handle(self, *args, **options):
        path = Path(options["design"])
        try:
            text = path.read_bytes()
        except OSError as error:
            self._fail([f"{path}: cannot read: {error.strerror or error}"])
        try:
            design = parse_design_text(text, source=str(path))
            measurements = attach_measurements(design, read_beside(path))
        except DesignError as error:
            self._fail([str(problem) for problem in error.problems])
        evaluation = evaluate(design, measurements)
        if options["output_format"] == "json":
            self.stdout.write(json.dumps(evaluation.as_dict(), indent=2, ensure_ascii=False))
        else:
            self.stdout.write(render_text(evaluation, ignored_paths=design.ignored_paths), ending="")
        for failure in evaluation.rule_failures:
            self.stderr.write(f"rule {failure.id} could not run, so {failure.topic} is not checked: {failure.error}")
        sys.exit(1 if evaluation.has_blocker or evaluation.rule_failures else 0)

    def _fail(self, problems: list[str]) -> None:
        self.stderr.write(f"The design can't be evaluated ({len(problems)} problem{'s' * (len(problems) != 1)}):")
        for problem in problems:
            self.stderr.write(f"  {problem}")
        sys.exit(EXIT_INVALID)
