"""Bounds and types of the command-line options, and a parser whose usage errors are one line."""

from __future__ import annotations

import argparse

__all__ = ["EXIT_OK", "EXIT_INTERNAL", "EXIT_INPUT", "EXIT_FAIL_ON", "MAX_FORECAST_FILES"]


EXIT_OK, EXIT_INTERNAL, EXIT_INPUT, EXIT_FAIL_ON = 0, 1, 2, 3

#: The most forecast files of one run: more than the lead times of any model run at
#: hourly steps for a week (168); each file is opened and indexed.
MAX_FORECAST_FILES = 1000


class _Parser(argparse.ArgumentParser):
    """An argument parser whose usage errors are one line with the fix (``--help`` is full)."""

    def error(self, message):
        """Print ``prog: error: message (fix: ...)`` on one line and exit 2."""
        text = " ".join(f"{self.prog}: error: {message} (fix: {self._fix(message)})".split())
        self.exit(EXIT_INPUT, text + "\n")

    def _fix(self, message):
        import difflib
        import re

        helps = f"see `{self.prog} --help`"
        unknown = re.match(r"unrecognized arguments: (\S+)", message)
        if unknown:
            word = unknown.group(1).split("=")[0].lstrip("-")
            names = {o.lstrip("-"): o for o in _option_strings(self) if o.startswith("--")}
            close = [names[c] for c in difflib.get_close_matches(word, sorted(names), n=1)]
            if self.prog == "icing":  # options belong to the commands
                helps = "see `icing COMMAND --help`"
            return (f"did you mean {close[0]}? " if close else "remove it; ") + helps
        choice = re.search(r"invalid choice: '([^']*)'", message)
        if choice:
            known = re.findall(r"'([^']*)'", message.split("choose from", 1)[-1])
            close = difflib.get_close_matches(choice.group(1), known, n=1)
            return (f"did you mean {close[0]}? " if close else "") + helps
        if "arguments are required" in message:
            example = {
                "icing screen": "icing screen ROUTE.geojson --forecast FILE --airframe NAME",
                "icing profile": "icing profile --forecast FILE --at=LAT,LON",
            }.get(self.prog, "icing screen ROUTE.geojson --forecast FILE --airframe NAME")
            return f"give them, e.g. `{example}`; {helps}"
        if "expected one argument" in message or "expected at least one" in message:
            return f"give the option its value (negative numbers as --opt=-1); {helps}"
        return helps


def _option_strings(parser):
    """Return every option string of a parser and of its subcommands."""
    out = set()
    for action in parser._actions:
        out.update(action.option_strings)
        if isinstance(action, argparse._SubParsersAction):
            for sub in action.choices.values():
                out |= _option_strings(sub)
    return out


def _bounded(low, high, unit, reason):
    """Return an argparse type: a finite number within [low, high], else a one-line error."""

    def number(text):
        import math

        try:
            value = float(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"{text!r} is not a number") from None
        if not math.isfinite(value) or not low <= value <= high:
            raise argparse.ArgumentTypeError(
                f"{text} is outside {low:g}..{high:g} {unit} ({reason})"
            )
        return value

    return number


_TAS = _bounded(
    1.0, 700.0, "kt", "below 1 kt a 1 km leg takes half an hour; above 700 kt is supersonic"
)


_STEP = _bounded(0.01, 100.0, "km", "finer than 10 m resolves nothing; coarser skips cloud layers")


_RADIUS = _bounded(0.1, 500.0, "km", "a sounding represents tens of kilometres, not a continent")


_TOLERANCE = _bounded(0.0, 72.0, "h", "a forecast older than three days is no forecast for now")


_ALTITUDE_FT = _bounded(-1000.0, 65600.0, "ft", "from below the sea to 20 km")


def _workers(text):
    """Return ``--workers``: a whole number 1..256, else a one-line error."""
    value = _bounded(1, 256, "processes", "one per core is enough; more only wait")(text)
    if value != int(value):
        raise argparse.ArgumentTypeError(f"{text} is not a whole number of processes")
    return int(value)


_WORKERS = _workers


_FLIGHT_LEVEL = _bounded(-20.0, 656.0, "", "FL656 is 20 km; a flight level is hundreds of feet")
