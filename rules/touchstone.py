"""Reads Touchstone network-parameter files (versions 1.0/1.1 and 2.0/2.1) into S-parameters.

Follows the IBIS Open Forum "Touchstone File Format Specification" (Version 1.1 and Version 2.0,
with the simple Version 2.1 additions). Every file that cannot be read raises TouchstoneError naming
the file and line, so a person uploading a measurement learns what to fix.

Reading is done in two passes over the network data. The fast pass hands whole lines to numpy's C
number parser; it accepts a file only when every check passes and gives up at the first doubt.
The careful pass then walks the same lines token by token: it is the definition of what this
reader accepts and the place where line numbers for errors come from.
"""

import math
import os
import re
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from rules.file_error import FileError

_FREQUENCY_UNITS_HZ = {"HZ": 1.0, "KHZ": 1e3, "MHZ": 1e6, "GHZ": 1e9}
_PARAMETERS = ("S", "Y", "Z", "H", "G")
_FORMATS = ("RI", "MA", "DB")
# Larger files exist only as simulator dumps; the limit keeps a hostile header from making us
# allocate gigabytes before any data is seen.
MAX_PORTS = 512
# A noise-parameter line: frequency, minimum noise figure (dB), |Gamma_opt|, angle of Gamma_opt
# (degrees), effective noise resistance (normalized in 1.x, ohms in 2.x).
_NOISE_NUMBERS = 5

# The only number syntax the specification uses; float() alone would also take "nan", "1_0" and
# non-ASCII digits.
_NUMBER = re.compile(r"[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")
_COUNT = re.compile(r"[0-9]{1,9}")
_SNP_NAME = re.compile(r"\.[sSyYzZhHgG]([0-9]{1,6})[pP]\Z")
_KEYWORD = re.compile(r"\[([^\]]*)\](.*)")
_KEYWORD_TITLES = {
    name.lower(): f"[{name}]"
    for name in ("Version", "Number of Ports", "Two-Port Data Order", "Number of Frequencies",
                 "Number of Noise Frequencies", "Reference", "Matrix Format", "Mixed-Mode Order",
                 "Begin Information", "End Information", "Network Data", "Noise Data", "End")
}
_HEADER_KEYWORDS = ("version", "number of ports", "two-port data order", "number of frequencies",
                    "number of noise frequencies", "reference", "matrix format", "mixed-mode order")
_KEYWORD_LINE = re.compile(r"^[ \t]*\[", re.MULTILINE)
_COMMENT = re.compile(r"!(.*)")
_BLANK_LINE = re.compile(r"\n[ \t]*\n")


class TouchstoneError(FileError):
    """A file that can't be read as Touchstone.

    str() gives 'NAME:LINE: message', or 'NAME: message' when no single line is to blame.
    """


@dataclass(frozen=True, eq=False)
class Network:
    """S-parameters of an N-port as read from one file. Arrays are read-only."""

    source: str  # the name the file came under, for messages
    version: str  # "1.1" for files without [Version], else "2.0" or "2.1"
    frequencies_hz: np.ndarray  # (F,) float64, strictly increasing
    s: np.ndarray  # (F, N, N) complex128, s[f, i, j] = S_(i+1)(j+1); Y and Z files are converted
    reference_ohm: np.ndarray  # (N,) float64, the real reference impedance of each port
    comments: tuple[str, ...]  # text after each '!', stripped, in file order

    @property
    def port_count(self) -> int:
        return int(self.s.shape[1])

    @property
    def frequencies_mhz(self) -> np.ndarray:
        return self.frequencies_hz / 1e6


def ports_from_name(name: str) -> int | None:
    """The port count a Touchstone 1.x file name announces (.s2p -> 2), or None."""
    match = _SNP_NAME.search(name)
    return int(match.group(1)) if match else None


@dataclass
class _Header:
    """Everything said before the network data."""

    version: str | None = None  # None: a 1.x file (no [Version] keyword)
    option_line: int | None = None
    unit_hz: float = 1e9
    parameter: str = "S"
    data_format: str = "MA"
    option_references_ohm: list[float] | None = None
    ports: int | None = None
    ports_line: int | None = None
    two_port_order: str | None = None
    frequency_count: int | None = None
    frequency_count_line: int | None = None
    noise_frequency_count: int | None = None
    noise_frequency_count_line: int | None = None
    references_ohm: list[float] | None = None
    reference_line: int | None = None
    matrix_format: str = "full"
    comments: list[str] = field(default_factory=list)


@dataclass
class _Records:
    table: np.ndarray  # (F, K): frequency then the K-1 numbers of one frequency
    comments: list[str]
    record_lines: list[int] | None  # line where each frequency starts (careful pass only)


class _Reader:
    def __init__(self, text: str, source: str, port_count: int | None) -> None:
        if port_count is not None and not 1 <= port_count <= MAX_PORTS:
            raise ValueError(f"port_count must be between 1 and {MAX_PORTS}, not {port_count}")
        text = text.removeprefix("\ufeff")
        if "\r" in text:
            text = text.replace("\r\n", "\n").replace("\r", "\n")
        self.text = text
        self.source = source
        self.port_count = port_count
        self.header = _Header()
        self.keywords_seen: set[str] = set()

    def error(self, message: str, line: int | None = None) -> TouchstoneError:
        return TouchstoneError(message, source=self.source, line=line)

    # ----------------------------------------------------------------------------------- header

    def read(self) -> Network:
        data_offset, data_line = self._read_header()
        header = self.header
        ports = self._resolve_ports(data_line)
        references_ohm = self._resolve_references(ports)
        if header.version is not None and ports == 2 and header.two_port_order is None:
            raise self.error("[Two-Port Data Order] (12_21 or 21_12) is required for 2-port data",
                             data_line - 1)
        if header.matrix_format == "full":
            per_frequency = 1 + 2 * ports * ports
        else:
            per_frequency = 1 + ports * (ports + 1)

        if header.version is None:
            region_end = len(self.text)
        else:
            keyword = _KEYWORD_LINE.search(self.text, data_offset)
            region_end = keyword.start() if keyword else len(self.text)
        region = self.text[data_offset:region_end]
        # v1 2-port files may end with noise parameters; the fast pass never accepts those.
        records = _fast_records(region, per_frequency)
        if records is None:
            records = self._careful_records(region, data_line, per_frequency, noise_may_follow=(
                header.version is None and ports == 2))
        comments = header.comments + records.comments
        if header.version is not None:
            tail_line = data_line + region.count("\n")
            comments += self._read_tail(region_end, tail_line, data_line - 1, ports)
        frequencies = records.table.shape[0]
        if header.frequency_count is not None and header.frequency_count != frequencies:
            raise self.error(
                f"[Number of Frequencies] is {header.frequency_count}, but the network data has "
                f"{frequencies}", header.frequency_count_line)

        def line_of(record: int) -> int:
            lines = records.record_lines
            if lines is None:
                lines = self._careful_records(region, data_line, per_frequency, noise_may_follow=(
                    header.version is None and ports == 2)).record_lines
            assert lines is not None
            return lines[record]

        frequencies_hz, s = self._to_s(records.table, ports, references_ohm, line_of)
        return Network(
            source=self.source,
            version=header.version or "1.1",
            frequencies_hz=_read_only(frequencies_hz),
            s=_read_only(s),
            reference_ohm=_read_only(np.asarray(references_ohm, dtype=np.float64)),
            comments=tuple(comments),
        )

    def _read_header(self) -> tuple[int, int]:
        """Read up to the network data; return its offset and line number."""
        text = self.text
        header = self.header
        position = 0
        number = 0
        pending_reference: list[float] | None = None
        in_information = False
        while position <= len(text):
            end = text.find("\n", position)
            if end < 0:
                end = len(text)
            line = text[position:end]
            number += 1
            line_start, position = position, end + 1
            content, comment = _split_comment(line)
            if comment is not None:
                header.comments.append(comment)
            if not content:
                continue
            if in_information:
                if _keyword_name(content) == "end information":
                    in_information = False
                continue
            if pending_reference is not None and not content.startswith(("[", "#")):
                self._continue_reference(pending_reference, content, number)
                if len(pending_reference) == header.ports:
                    pending_reference = None
                continue
            if pending_reference is not None:
                raise self._short_reference(pending_reference, header.reference_line)
            if content.startswith("#"):
                if header.option_line is None:
                    self._read_option_line(content, number)
                # The specification allows one option line; later ones are ignored, as 1.x readers always did.
                continue
            if content.startswith("["):
                name, argument = self._split_keyword(content, number)
                if name == "network data":
                    if header.version is None:
                        raise self.error("[Network Data] needs [Version] 2.0 at the top of the file", number)
                    if argument:
                        raise self.error(f"unexpected {argument!r} after [Network Data]", number)
                    return position, number + 1
                if name == "begin information":
                    in_information = True
                    continue
                pending_reference = self._read_keyword(name, argument, number)
                if pending_reference is not None and len(pending_reference) == header.ports:
                    pending_reference = None
                continue
            if header.version is not None:
                raise self.error("expected [Network Data] before the network data", number)
            if comment is not None:
                header.comments.pop()  # the data line's comment is read again with the data
            return line_start, number
        if pending_reference is not None:
            raise self._short_reference(pending_reference, header.reference_line)
        if header.version is not None:
            raise self.error("missing [Network Data]")
        raise self.error("no network data")

    def _read_option_line(self, content: str, number: int) -> None:
        header = self.header
        header.option_line = number
        fields = content[1:].split()
        seen: set[str] = set()
        slot = 0  # position among unit, parameter and format, the order the specification writes them in
        index = 0
        while index < len(fields):
            token = fields[index]
            key = token.upper()
            if key in _FREQUENCY_UNITS_HZ:
                kind = "frequency unit"
                header.unit_hz = _FREQUENCY_UNITS_HZ[key]
            elif key in _PARAMETERS:
                kind = "parameter"
                if key in ("H", "G"):
                    raise self.error(
                        f"{key}-parameters are not supported: only S, Y and Z parameters can be turned "
                        "into S-parameters", number)
                header.parameter = key
            elif key in _FORMATS:
                kind = "format"
                header.data_format = key
            elif key == "R":
                kind = "reference resistance"
                values: list[float] = []
                index += 1
                while index < len(fields) and _NUMBER.fullmatch(fields[index]):
                    values.append(float(fields[index]))
                    index += 1
                if not values:
                    raise self.error("expected the reference resistance in ohms after R", number)
                for value in values:
                    if not (math.isfinite(value) and value > 0.0):
                        raise self.error(
                            f"reference resistance must be a positive number of ohms, not {value:g}", number)
                header.option_references_ohm = values
            else:
                raise self.error(self._unknown_option_message(token, slot, seen), number)
            if kind in seen:
                raise self.error(f"the option line gives the {kind} twice", number)
            seen.add(kind)
            if kind != "reference resistance":
                slot += 1
                index += 1

    @staticmethod
    def _unknown_option_message(token: str, slot: int, seen: set[str]) -> str:
        shown = _shown(token)
        if slot == 0 and "frequency unit" not in seen:
            return f"unknown frequency unit {shown}, expected Hz, kHz, MHz or GHz"
        if slot == 1 and "parameter" not in seen:
            return f"unknown parameter {shown}, expected S, Y, Z, H or G"
        if slot == 2 and "format" not in seen:
            return f"unknown format {shown}, expected RI, MA or DB"
        return (f"unexpected {shown} on the option line, expected '# <unit> <parameter> <format> R <ohms>'")

    def _split_keyword(self, content: str, number: int) -> tuple[str, str]:
        match = _KEYWORD.match(content)
        if match is None:
            raise self.error(f"keyword {_shown(content)} is missing its closing ']'", number)
        return " ".join(match.group(1).split()).lower(), match.group(2).strip()

    def _read_keyword(self, name: str, argument: str, number: int) -> list[float] | None:
        """Apply one header keyword; return the reference list when [Reference] continues on later lines."""
        header = self.header
        if name == "version":
            if header.version is not None:
                raise self.error("[Version] given twice", number)
            version = argument.split()[0] if argument else ""
            if version not in ("2.0", "2.1", "2"):
                raise self.error(f"unsupported [Version] {_shown(argument)}, expected 2.0 or 2.1", number)
            header.version = "2.0" if version == "2" else version
            return None
        if header.version is None:
            raise self.error(
                f"{_title(name)} is a Touchstone 2.0 keyword: the file must start with [Version] 2.0", number)
        if name in _HEADER_KEYWORDS:
            if name in self.keywords_seen:
                raise self.error(f"{_title(name)} given twice", number)
            self.keywords_seen.add(name)
        if name == "number of ports":
            ports = self._count(argument, "[Number of Ports]", number)
            if not 1 <= ports <= MAX_PORTS:
                raise self.error(f"[Number of Ports] must be between 1 and {MAX_PORTS}, not {ports}", number)
            header.ports = ports
            header.ports_line = number
        elif name == "two-port data order":
            if argument not in ("12_21", "21_12"):
                raise self.error(
                    f"[Two-Port Data Order] must be 12_21 or 21_12, not {_shown(argument)}", number)
            header.two_port_order = argument
        elif name == "number of frequencies":
            header.frequency_count = self._count(argument, "[Number of Frequencies]", number)
            header.frequency_count_line = number
            if header.frequency_count < 1:
                raise self.error("[Number of Frequencies] must be at least 1", number)
        elif name == "number of noise frequencies":
            header.noise_frequency_count = self._count(argument, "[Number of Noise Frequencies]", number)
            header.noise_frequency_count_line = number
        elif name == "matrix format":
            matrix_format = argument.lower()
            if matrix_format not in ("full", "lower", "upper"):
                raise self.error(
                    f"[Matrix Format] must be Full, Lower or Upper, not {_shown(argument)}", number)
            header.matrix_format = matrix_format
        elif name == "reference":
            if header.ports is None:
                raise self.error("[Reference] must come after [Number of Ports]", number)
            header.reference_line = number
            references: list[float] = []
            if argument:
                self._continue_reference(references, argument, number)
            header.references_ohm = references
            return references
        elif name == "mixed-mode order":
            raise self.error("mixed-mode data is not supported: export single-ended S-parameters", number)
        elif name in ("noise data", "end", "end information"):
            raise self.error(f"{_title(name)} before [Network Data]", number)
        # Other keywords (later revisions add some) carry nothing this reader needs.
        return None

    def _continue_reference(self, references: list[float], content: str, number: int) -> None:
        assert self.header.ports is not None
        for token in content.split():
            value = self._number(token, number)
            if value <= 0.0:
                raise self.error(
                    f"reference impedance must be a positive number of ohms, not {token}", number)
            references.append(value)
        if len(references) > self.header.ports:
            raise self.error(
                f"[Reference] needs {self.header.ports} values, one per port, got {len(references)}", number)

    def _short_reference(self, references: list[float], line: int | None) -> TouchstoneError:
        return self.error(
            f"[Reference] needs {self.header.ports} values, one per port, got {len(references)}", line)

    def _count(self, argument: str, keyword: str, number: int) -> int:
        if not _COUNT.fullmatch(argument):
            raise self.error(f"{keyword} expects a whole number, got {_shown(argument)}", number)
        return int(argument)

    def _number(self, token: str, number: int) -> float:
        if _NUMBER.fullmatch(token):
            value = float(token)
            if not math.isfinite(value):
                raise self.error(f"number {_shown(token)} is too large", number)
            return value
        try:
            value = float(token)
        except ValueError:
            value = 0.0
        if not math.isfinite(value):
            raise self.error(f"values must be finite numbers, got {_shown(token)}", number)
        raise self.error(f"expected a number, got {_shown(token)}", number)

    def _resolve_ports(self, data_line: int) -> int:
        header = self.header
        named = ports_from_name(self.source)
        if header.version is not None:
            if header.ports is None:
                raise self.error("[Number of Ports] is required in a Touchstone 2.0 file", data_line - 1)
            for announced, what in ((self.port_count, "port_count"), (named, "the file name")):
                if announced is not None and announced != header.ports:
                    raise self.error(
                        f"[Number of Ports] says {header.ports}, but {what} says {announced}",
                        header.ports_line)
            return header.ports
        if named is not None and self.port_count is not None and named != self.port_count:
            raise self.error(f"the file name says {named} ports, but port_count is {self.port_count}")
        ports = self.port_count if self.port_count is not None else named
        if ports is None:
            raise self.error(
                "cannot tell the number of ports: a Touchstone 1.x file's name must end in .sNp "
                "(such as .s2p), or the caller must give port_count")
        if not 1 <= ports <= MAX_PORTS:
            raise self.error(f"the number of ports must be between 1 and {MAX_PORTS}, not {ports}")
        return ports

    def _resolve_references(self, ports: int) -> list[float]:
        header = self.header
        if header.references_ohm is not None:
            return header.references_ohm
        values = header.option_references_ohm or [50.0]
        if len(values) == 1:
            return values * ports
        if len(values) == ports:
            return values
        raise self.error(
            f"R gives {len(values)} reference resistances; expected one, or one per port ({ports})",
            header.option_line)

    # ------------------------------------------------------------------------------------- data

    def _careful_records(self, region: str, first_line: int, per_frequency: int, *,
                         noise_may_follow: bool) -> _Records:
        """Token-by-token reading of the network data; the definition of what is accepted."""
        values: list[float] = []
        record_lines: list[int] = []
        comments: list[str] = []
        collected = 0  # numbers of the current frequency seen so far
        previous_token = ""
        # A frequency that starts in the middle of a line means an earlier one was short or long.
        # That is tolerated when everything else adds up, and blamed if anything else goes wrong.
        misalignment: TouchstoneError | None = None
        noise_from: int | None = None
        for offset, line in enumerate(region.split("\n")):
            number = first_line + offset
            content, comment = _split_comment(line)
            if comment is not None:
                comments.append(comment)
            if not content:
                continue
            if noise_from is not None:
                self._noise_line(content, number, noise_from)
                continue
            if content.startswith("#"):
                if self.header.option_line is None:
                    raise self.error("the option line must come before the data", number)
                continue
            tokens = content.split()
            for index, token in enumerate(tokens):
                value = self._number(token, number)
                if collected == 0:
                    if index > 0 and misalignment is None:
                        start = record_lines[-1]
                        got = len(tokens) if start == number else per_frequency - index
                        misalignment = self.error(
                            f"expected {per_frequency} numbers for one frequency, got {got}", start)
                    if record_lines and value <= values[-per_frequency]:
                        if misalignment is not None:
                            raise misalignment
                        if noise_may_follow and index == 0 and len(tokens) == _NOISE_NUMBERS:
                            for rest in tokens[1:]:
                                self._number(rest, number)
                            noise_from = number
                            break
                        raise self.error(
                            f"frequency {_shown(token)} is not higher than the previous one "
                            f"({_shown(previous_token)} at line {record_lines[-1]}); "
                            "frequencies must increase",
                            number)
                    if value < 0.0:
                        raise misalignment or self.error(f"frequency {_shown(token)} is negative", number)
                    record_lines.append(number)
                    previous_token = token
                values.append(value)
                collected = (collected + 1) % per_frequency
        if collected:
            raise misalignment or self.error(
                f"expected {per_frequency} numbers for one frequency, got {collected} before the data ends",
                record_lines[-1])
        if not record_lines:
            raise self.error("no network data", first_line - 1 if self.header.version else None)
        table = np.asarray(values, dtype=np.float64).reshape(len(record_lines), per_frequency)
        return _Records(table=table, comments=comments, record_lines=record_lines)

    def _noise_line(self, content: str, number: int, noise_from: int) -> None:
        tokens = content.split()
        for token in tokens:
            self._number(token, number)
        if len(tokens) != _NOISE_NUMBERS:
            raise self.error(
                f"expected {_NOISE_NUMBERS} numbers on a noise-parameter line (the noise data starts at line "
                f"{noise_from}, where the frequency went down), got {len(tokens)}", number)

    def _read_tail(self, offset: int, first_line: int, network_line: int, ports: int) -> list[str]:
        """Keywords and noise data after the network data of a 2.x file."""
        header = self.header
        comments: list[str] = []
        noise_line: int | None = None
        noise_frequencies: list[float] = []
        collected = 0
        in_information = False
        for index, line in enumerate(self.text[offset:].split("\n")):
            number = first_line + index
            content, comment = _split_comment(line)
            if comment is not None:
                comments.append(comment)
            if not content:
                continue
            if in_information:
                if _keyword_name(content) == "end information":
                    in_information = False
                continue
            if content.startswith("["):
                name, _argument = self._split_keyword(content, number)
                if name == "end":
                    break
                if name == "noise data":
                    if noise_line is not None:
                        raise self.error("[Noise Data] given twice", number)
                    if ports != 2:
                        raise self.error("noise data is only defined for 2-port networks", number)
                    noise_line = number
                elif name == "begin information":
                    in_information = True
                elif name == "network data":
                    raise self.error(f"[Network Data] given twice (first at line {network_line})", number)
                elif name in _HEADER_KEYWORDS:
                    raise self.error(f"{_title(name)} must come before [Network Data]", number)
                continue
            if content.startswith("#"):
                continue
            if noise_line is None:
                raise self.error("expected a keyword after the network data", number)
            for token in content.split():
                value = self._number(token, number)
                if collected == 0:
                    if noise_frequencies and value <= noise_frequencies[-1]:
                        raise self.error(
                            f"noise frequency {_shown(token)} is not higher than the previous one", number)
                    noise_frequencies.append(value)
                collected = (collected + 1) % _NOISE_NUMBERS
        if collected:
            raise self.error(f"expected {_NOISE_NUMBERS} numbers for one noise frequency, got {collected}",
                             number)
        if noise_line is not None:
            expected = header.noise_frequency_count
            if expected is None:
                raise self.error("[Noise Data] needs [Number of Noise Frequencies]", noise_line)
            if expected != len(noise_frequencies):
                raise self.error(
                    f"[Number of Noise Frequencies] is {expected}, but the noise data has "
                    f"{len(noise_frequencies)}",
                    header.noise_frequency_count_line)
        return comments

    # -------------------------------------------------------------------------------- convert

    def _to_s(self, table: np.ndarray, ports: int, references_ohm: list[float],
              line_of: Callable[[int], int]) -> tuple[np.ndarray, np.ndarray]:
        header = self.header
        count = table.shape[0]
        with np.errstate(all="ignore"):
            frequencies_hz = table[:, 0] * header.unit_hz
            first = table[:, 1::2]
            second = table[:, 2::2]
            values = np.empty(first.shape, dtype=np.complex128)
            if header.data_format == "RI":
                values.real = first
                values.imag = second
            else:
                magnitude = first if header.data_format == "MA" else 10.0 ** (first / 20.0)
                angle_rad = np.deg2rad(second)
                values.real = magnitude * np.cos(angle_rad)
                values.imag = magnitude * np.sin(angle_rad)
        bad = ~np.isfinite(frequencies_hz)
        if bad.any():
            raise self.error("frequency is too large", line_of(int(np.argmax(bad))))
        steps = np.diff(frequencies_hz) <= 0.0
        if steps.any():
            record = int(np.argmax(steps)) + 1
            raise self.error("frequency is not higher than the previous one once scaled to Hz",
                             line_of(record))

        if header.matrix_format == "full":
            matrix = values.reshape(count, ports, ports)
            # 2-port data is written column by column (N11 N21 N12 N22) in 1.x files and in 2.x files
            # that declare 21_12; every other case is row by row.
            if ports == 2 and (header.version is None or header.two_port_order == "21_12"):
                matrix = matrix.transpose(0, 2, 1)
            matrix = np.ascontiguousarray(matrix)
        else:
            matrix = np.zeros((count, ports, ports), dtype=np.complex128)
            if header.matrix_format == "lower":
                rows, columns = np.tril_indices(ports)
            else:
                rows, columns = np.triu_indices(ports)
            matrix[:, rows, columns] = values
            matrix[:, columns, rows] = values

        if header.parameter != "S":
            matrix = self._to_scattering(matrix, references_ohm, line_of)
        bad_rows = ~np.isfinite(matrix).reshape(count, -1).all(axis=1)
        if bad_rows.any():
            raise self.error("values at this frequency are too large to convert",
                             line_of(int(np.argmax(bad_rows))))
        return frequencies_hz, matrix

    def _to_scattering(self, matrix: np.ndarray, references_ohm: list[float],
                       line_of: Callable[[int], int]) -> np.ndarray:
        """Y or Z to S with a real reference per port (power waves, Kurokawa 1965):
        S = R^-1/2 (Z - R)(Z + R)^-1 R^1/2 = R^-1/2 (I - R Y)(I + R Y)^-1 R^1/2, R = diag(references).
        With one common reference this is the familiar S = (Z - Z0)(Z + Z0)^-1."""
        header = self.header
        ports = matrix.shape[1]
        reference = np.asarray(references_ohm, dtype=np.float64)
        if header.version is None and np.ptp(reference) != 0.0:
            # 1.x files store Y and Z normalized to R, which must then be one value for all ports.
            raise self.error(
                "normalized Y or Z data needs one reference resistance for all ports", header.option_line)
        root = np.sqrt(reference)
        identity = np.eye(ports)
        with np.errstate(all="ignore"):
            if header.version is None:
                normalized = matrix
            elif header.parameter == "Z":
                normalized = matrix / root[:, None] / root[None, :]
            else:
                normalized = matrix * root[:, None] * root[None, :]
            bad = ~np.isfinite(normalized).reshape(len(matrix), -1).all(axis=1)
            if bad.any():
                raise self.error("values at this frequency are too large to convert",
                                 line_of(int(np.argmax(bad))))
            # In normalized form z = R^-1/2 Z R^-1/2 the power-wave S is (z - I)(z + I)^-1, and for
            # y = R^1/2 Y R^1/2 it is (I - y)(I + y)^-1.
            if header.parameter == "Z":
                numerator, denominator = normalized - identity, normalized + identity
            else:
                numerator, denominator = identity - normalized, identity + normalized
            # X = A B^-1  <=>  B^T X^T = A^T
            left, right = denominator.transpose(0, 2, 1), numerator.transpose(0, 2, 1)
            try:
                transposed = np.linalg.solve(left, right)
            except np.linalg.LinAlgError:
                singular = 0
                for record in range(len(matrix)):
                    try:
                        np.linalg.solve(left[record], right[record])
                    except np.linalg.LinAlgError:
                        singular = record
                        break
                raise self.error(
                    f"{header.parameter}-parameters at this frequency have no S-parameter equivalent "
                    "(singular matrix)", line_of(singular)) from None
        return np.ascontiguousarray(transposed.transpose(0, 2, 1))


def _fast_records(region: str, per_frequency: int) -> _Records | None:
    """Parse the network data with numpy when it is plainly well formed; None means 'read carefully'.

    On ASCII text numpy's parser accepts a subset of what the careful pass accepts (it also takes
    nan and inf, which the finiteness check turns away), so whatever this returns the careful pass
    would have returned too.
    """
    comments: list[str] = []
    if "!" in region:
        comments = [comment.strip() for comment in _COMMENT.findall(region)]
        # Comment-only lines are left blank; blank lines are dealt with below.
        region = _COMMENT.sub("", region)
    region = region.strip()
    if not region or not region.isascii():
        return None
    lines = region.split("\n")
    # Writers put one frequency on a fixed number of lines; learn it from the first frequency.
    lines_per_frequency = 0
    taken = 0
    for line in lines:
        taken += len(line.split())
        lines_per_frequency += 1
        if taken >= per_frequency:
            break
    if taken != per_frequency:
        return None
    if lines_per_frequency > 1:
        if _BLANK_LINE.search(region):
            lines = [line for line in lines if line and not line.isspace()]
        if len(lines) % lines_per_frequency:
            return None
        lines = [" ".join(lines[start:start + lines_per_frequency])
                 for start in range(0, len(lines), lines_per_frequency)]
    try:
        # One row per frequency; numpy skips blank rows and rejects ragged ones.
        table = np.loadtxt(lines, dtype=np.float64, comments=None, ndmin=2)
    except ValueError:
        return None
    if table.shape[1] != per_frequency or not np.isfinite(table).all():
        return None
    frequencies = table[:, 0]
    if frequencies[0] < 0.0 or (np.diff(frequencies) <= 0.0).any():
        return None
    return _Records(table=table, comments=comments, record_lines=None)


def _split_comment(line: str) -> tuple[str, str | None]:
    cut = line.find("!")
    if cut < 0:
        return line.strip(), None
    return line[:cut].strip(), line[cut + 1:].strip()


def _keyword_name(content: str) -> str | None:
    match = _KEYWORD.match(content)
    return " ".join(match.group(1).split()).lower() if match else None


def _title(name: str) -> str:
    return _KEYWORD_TITLES.get(name, f"[{name}]")


def _shown(token: str) -> str:
    """A token quoted for a message, cut short so a binary file can't flood the message."""
    return repr(token if len(token) <= 40 else token[:40] + "...")


def _read_only(array: np.ndarray) -> np.ndarray:
    array.setflags(write=False)
    return array


def parse_touchstone(text: str, *, source: str, port_count: int | None = None) -> Network:
    """Read Touchstone text. `source` names it in errors; for 1.x data the port count comes from
    `port_count` or, failing that, from a `.sNp` ending of `source`."""
    return _Reader(text, source, port_count).read()


def read_touchstone(path: str | os.PathLike[str], *, source: str | None = None) -> Network:
    """Read a Touchstone file. Text is UTF-8 (the specification asks for ASCII), falling back to
    Latin-1 so a stray degree sign in a comment does not reject the file."""
    file_path = Path(path)
    raw = file_path.read_bytes()
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = raw.decode("latin-1")
    name = source if source is not None else file_path.name
    port_count = None if ports_from_name(name) is not None else ports_from_name(file_path.name)
    if port_count is not None and not 1 <= port_count <= MAX_PORTS:
        raise TouchstoneError(f"the number of ports must be between 1 and {MAX_PORTS}, not {port_count}",
                              source=name)
    return parse_touchstone(text, source=name, port_count=port_count)
