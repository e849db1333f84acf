"""`manage.py evaluate DESIGN.json [--format text|json]`: the checklist for a design file.

Exit status (contract): 0 no blocker, 1 at least one blocker, 2 the design or a measurement it names is
invalid (every problem on stderr, each with its path). Whatever the file holds, the answer is one of these
three with a message, never a traceback: a value the parser lets through and a rule then fails on is also
exit 2, with a message of its own naming the rule (so that exit 1 always means "a blocker was raised").
Everything printed is escaped for the terminal (rules/terminal_text.py).
"""

import json
import sys
import traceback
from pathlib import Path

from django.core.management.base import BaseCommand

from projectapp.designs.forms import MAX_DESIGN_FILE_BYTES
from projectapp.designs.services import MAX_MEASUREMENT_BYTES
from rules.design import DesignError, parse_design_text
from rules.evaluate import evaluate
from rules.measurements import attach_measurements, read_beside
from rules.registry import Rule
from rules.terminal_text import printable, printable_json
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
        for stream in (self.stdout, self.stderr):
            reconfigure = getattr(stream, "reconfigure", None)  # a real terminal or pipe, not a StringIO
            if reconfigure is not None:
                reconfigure(errors="backslashreplace")  # a terminal that isn't UTF-8 gets \xc4, not a crash
        path = Path(options["design"])
        text = self._read_design(path)
        try:
            design = parse_design_text(text, source=str(path))
            measurements = attach_measurements(design, read_beside(path, max_bytes=MAX_MEASUREMENT_BYTES))
        except DesignError as error:
            self._fail([str(problem) for problem in error.problems])
        except Exception as error:  # the parser should explain every bad value; one that slips through is still exit 2
            self._show_traceback(options, error)
            self._fail([f"{path}: a value the parser could not handle ({type(error).__name__}: {error})"])
        try:
            evaluation = evaluate(design, measurements)
            if options["output_format"] == "json":
                output = printable_json(json.dumps(evaluation.as_dict(), indent=2, ensure_ascii=False)) + "\n"
            else:
                output = render_text(evaluation, ignored_paths=design.ignored_paths)
        except Exception as error:
            self._show_traceback(options, error)
            self._rule_failed(error)
        self.stdout.write(output, ending="")
        sys.exit(1 if evaluation.has_blocker else 0)

    def _read_design(self, path: Path) -> bytes:
        """At most the upload limit (and one byte to tell it was more): /dev/zero must not fill the memory."""
        try:
            with path.open("rb") as handle:
                text = handle.read(MAX_DESIGN_FILE_BYTES + 1)
        except (OSError, ValueError) as error:
            reason = error.strerror if isinstance(error, OSError) and error.strerror else str(error)
            self._fail([f"{path}: cannot read: {reason}"])
        if len(text) > MAX_DESIGN_FILE_BYTES:
            self._fail([f"{path}: expected at most {MAX_DESIGN_FILE_BYTES // 1000} kB, got more"])
        return text

    def _fail(self, problems: list[str]) -> None:
        self.stderr.write(f"The design can't be evaluated ({len(problems)} problem{'s' * (len(problems) != 1)}):")
        for problem in problems:
            self.stderr.write(printable(f"  {problem}"))
        sys.exit(EXIT_INVALID)

    def _show_traceback(self, options: dict, error: Exception) -> None:
        """Only when asked for (Django's --traceback option), for whoever looks into a fault."""
        if options.get("traceback"):
            self.stderr.write(printable("".join(traceback.format_exception(error))), ending="")

    def _rule_failed(self, error: Exception) -> None:
        rule_id = _failing_rule(error)
        which = f"rule {rule_id}" if rule_id else "the evaluation"
        self.stderr.write(printable(
            f"The design can't be evaluated: a rule failed on this design ({which} raised "
            f"{type(error).__name__}: {error})."))
        self.stderr.write("  A value may be beyond what the rule can compute with (check the design's numbers), "
                          "or this is a fault in Earshot: please report it with the design file (and the "
                          "output of --traceback).")
        sys.exit(EXIT_INVALID)


def _failing_rule(error: Exception) -> str | None:
    """The id of the rule whose check raised `error`, read from the traceback (Rule.run's frame)."""
    for frame, _ in traceback.walk_tb(error.__traceback__):
        if frame.f_code is Rule.run.__code__:
            rule = frame.f_locals.get("self")
            return rule.id if isinstance(rule, Rule) else None
    return None
