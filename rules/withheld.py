"""Values a partial design does not have yet, and what a rule meets when it reads one anyway.

A draft's design may be partly answered or partly mistyped. `rules.design.parse_design_partial()` keeps
what it could read and puts a `Withheld` marker where a value is missing or wrong. Rules declare which
inputs they need (`@rule(needs=...)`); `rules.evaluate.evaluate_partial()` runs only those whose inputs
are all there. The marker is the safety net behind those declarations: any use of it (reading an attribute,
iterating, comparing, formatting, testing its truth) raises `Unavailable`, so a rule that reads an input it
did not declare stops and is listed as waiting, instead of judging on an invented default (a missing
position read as "not given", a missing band list read as "no bands").
"""

from typing import Any, NoReturn


class Unavailable(LookupError):
    """A rule read an input the partial design does not have (its name is `input`)."""

    def __init__(self, input_name: str):
        self.input = input_name
        super().__init__(f"{input_name} is not available in this partial design")


class Withheld:
    """Stands in for a design value that is not answered yet or could not be read."""

    __slots__ = ("input",)

    def __init__(self, input_name: str):
        object.__setattr__(self, "input", input_name)

    def __repr__(self) -> str:  # safe: logs and debuggers may show it
        return f"<withheld {self.input}>"

    def _refuse(self, *args: Any, **kwargs: Any) -> NoReturn:
        raise Unavailable(object.__getattribute__(self, "input"))

    def __getattr__(self, name: str) -> Any:
        if name.startswith("__"):  # copy, pickle and friends probe for optional hooks this way
            raise AttributeError(name)
        self._refuse()

    __setattr__ = _refuse
    __iter__ = __len__ = __getitem__ = __contains__ = __bool__ = _refuse
    __float__ = __int__ = __index__ = __complex__ = __round__ = __abs__ = __neg__ = __pos__ = _refuse
    __add__ = __radd__ = __sub__ = __rsub__ = __mul__ = __rmul__ = __truediv__ = __rtruediv__ = _refuse
    __floordiv__ = __rfloordiv__ = __mod__ = __pow__ = __rpow__ = _refuse
    __eq__ = __ne__ = __lt__ = __le__ = __gt__ = __ge__ = __hash__ = _refuse
    __str__ = __format__ = _refuse


def is_withheld(value: Any) -> bool:
    return type(value) is Withheld
