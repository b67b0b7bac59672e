"""Building a design in code, or reading one from lotwise's TOML design-file schema."""

from __future__ import annotations

import math
import os
from numbers import Real
from typing import TYPE_CHECKING, Iterable, List, Optional, Sequence, Union

from . import _core

if TYPE_CHECKING:
    from ._study import Study

__all__ = ["Design", "load", "parse"]

#: A value in SI units, or engineering text such as "4.99k" or "100n".
Value = Union[float, str]
#: One node name, or a pair (plus, minus).
Nodes = Union[str, Sequence[str]]


def load(path: Union[str, "os.PathLike[str]"]) -> "Study":
    """Read a design file and compile it.

    Parameters
    ----------
    path : str or os.PathLike
        A design file in lotwise's TOML schema (see ``docs/examples``).

    Returns
    -------
    Study
        The compiled design, ready to :meth:`~Study.run`.

    Raises
    ------
    DesignError
        If the file cannot be read or is malformed; the message starts with
        ``FILE:LINE:COLUMN:`` and names the key or part at fault.
    CircuitError
        If the circuit cannot be solved as drawn (a floating node, a loop of voltage
        sources).
    """
    return Design.from_file(path).compile()


def parse(text: str, source_name: str = "<design>") -> "Study":
    """Compile a design given as TOML text.

    Parameters
    ----------
    text : str
        The design, in the same schema as a design file.
    source_name : str, optional
        Name used in error messages in place of a file name.

    Returns
    -------
    Study

    Raises
    ------
    DesignError, CircuitError
        As for :func:`load`.
    """
    return Design.from_text(text, source_name).compile()


class Design:
    """A design under construction: circuit, variations, measurements and specs.

    Parts are added with one method per kind. Values are floats in SI units (ohm, farad,
    henry, volt, ampere) or engineering text ("4.99k", "100n", "2.2u"). Part names and
    values are checked as they are added; variations, measurements and specs are
    checked against the circuit by :meth:`compile`.

    Parameters
    ----------
    title : str, optional
        Shown in reports.
    ground : str, optional
        Name of the reference node.

    Examples
    --------
    A non-inverting amplifier with a gain of 11:

    >>> d = Design(title="x11 buffer")
    >>> d.voltage_source("VIN", "in", "gnd", 0.1)
    >>> d.opamp("U1", "in", "fb", "out")
    >>> d.resistor("RF", "out", "fb", "10k")
    >>> d.resistor("RG", "fb", "gnd", "1k")
    >>> d.vary("R*", "1%")
    >>> d.measure("gain", "gain", inputs="VIN", output="out")
    >>> d.spec("gain", min=10.8, max=11.2)
    >>> round(d.compile().nominal_values["gain"], 6)
    11.0
    """

    def __init__(self, title: str = "", ground: str = "gnd") -> None:
        self._core = _core.Design(title, ground)

    @classmethod
    def from_file(cls, path: Union[str, "os.PathLike[str]"]) -> "Design":
        """Read a design file without compiling it, so it can still be changed."""
        return cls._wrap(_core.load_design(os.fspath(path)))

    @classmethod
    def from_text(cls, text: str, source_name: str = "<design>") -> "Design":
        """Read a design from TOML text without compiling it."""
        return cls._wrap(_core.parse_design(text, source_name))

    @classmethod
    def _wrap(cls, core: "_core.Design") -> "Design":
        design = cls.__new__(cls)
        design._core = core
        return design

    def copy(self) -> "Design":
        """An independent copy."""
        return Design._wrap(self._core.copy())

    # -- description -------------------------------------------------------------------

    @property
    def title(self) -> str:
        """Title shown in reports."""
        return self._core.title

    @title.setter
    def title(self, value: str) -> None:
        self._core.title = value

    @property
    def ground(self) -> str:
        """Name of the reference node."""
        return self._core.ground

    @property
    def samples(self) -> int:
        """Default number of samples of a run (the design file's ``[run] samples``)."""
        return self._core.samples

    @samples.setter
    def samples(self, value: int) -> None:
        self._core.samples = _whole(value, "samples", 1)

    @property
    def seed(self) -> int:
        """Default seed of a run."""
        return self._core.seed

    @seed.setter
    def seed(self, value: int) -> None:
        self._core.seed = _whole(value, "seed", 0)

    @property
    def threads(self) -> int:
        """Default number of worker threads of a run; 0 uses one per hardware thread."""
        return self._core.threads

    @threads.setter
    def threads(self, value: int) -> None:
        self._core.threads = _whole(value, "threads", 0)

    @property
    def element_names(self) -> List[str]:
        """Names of the parts, in the order they were added."""
        return self._core.element_names

    @property
    def parameter_names(self) -> List[str]:
        """Names of the parameters a variation may target ("R1", "U1.offset", ...)."""
        return self._core.parameter_names

    @property
    def nodes(self) -> List[str]:
        """Node names in order of first use, ground excluded."""
        return self._core.nodes

    @property
    def measurement_names(self) -> List[str]:
        """Names of the measurements, in the order they were added."""
        return self._core.measurement_names

    def set_nominal(self, parameter: str, value: Value) -> None:
        """Change one parameter's nominal value ("R1", "U1.offset", ...)."""
        self._core.set_nominal(parameter, _value(value, f"parameter '{parameter}'"))

    def __repr__(self) -> str:
        title = f" {self.title!r}" if self.title else ""
        return (
            f"<lotwise.Design{title}: {len(self.element_names)} parts, "
            f"{len(self._core.variations)} variations, "
            f"{len(self.measurement_names)} measurements, {len(self._core.specs)} specs>"
        )

    # -- parts -------------------------------------------------------------------------

    def resistor(self, name: str, a: str, b: str, value: Value) -> None:
        """Add a resistor of ``value`` ohms between nodes ``a`` and ``b``."""
        self._core.add_resistor(name, a, b, _value(value, f"part '{name}': value"))

    def capacitor(self, name: str, a: str, b: str, value: Value) -> None:
        """Add a capacitor of ``value`` farads (open at DC)."""
        self._core.add_capacitor(name, a, b, _value(value, f"part '{name}': value"))

    def inductor(self, name: str, a: str, b: str, value: Value) -> None:
        """Add an inductor of ``value`` henries (shorted at DC)."""
        self._core.add_inductor(name, a, b, _value(value, f"part '{name}': value"))

    def voltage_source(self, name: str, plus: str, minus: str, value: Value) -> None:
        """Add an independent voltage source: V(plus) - V(minus) = value."""
        self._core.add_voltage_source(name, plus, minus, _value(value, f"part '{name}': value"))

    def current_source(self, name: str, from_node: str, to_node: str, value: Value) -> None:
        """Add an independent current source.

        ``value`` amperes flow out of ``from_node``, through the source, into ``to_node``.
        """
        self._core.add_current_source(name, from_node, to_node, _value(value, f"part '{name}': value"))

    def vcvs(
        self, name: str, plus: str, minus: str, control_plus: str, control_minus: str,
        gain: Value,
    ) -> None:
        """Voltage-controlled voltage source.

        V(plus) - V(minus) = gain * (V(control_plus) - V(control_minus)).
        """
        self._core.add_vcvs(
            name, plus, minus, control_plus, control_minus, _value(gain, f"part '{name}': value")
        )

    def vccs(
        self, name: str, from_node: str, to_node: str, control_plus: str, control_minus: str,
        transconductance: Value,
    ) -> None:
        """Voltage-controlled current source.

        transconductance * (V(control_plus) - V(control_minus)) amperes flow from
        ``from_node`` through the source to ``to_node``.
        """
        self._core.add_vccs(
            name, from_node, to_node, control_plus, control_minus,
            _value(transconductance, f"part '{name}': value"),
        )

    def ccvs(
        self, name: str, plus: str, minus: str, control_source: str, transresistance: Value
    ) -> None:
        """Current-controlled voltage source.

        V(plus) - V(minus) = transresistance * I(control_source), the current through
        that voltage source from its plus node to its minus node.
        """
        self._core.add_ccvs(
            name, plus, minus, control_source, _value(transresistance, f"part '{name}': value")
        )

    def cccs(
        self, name: str, from_node: str, to_node: str, control_source: str, gain: Value
    ) -> None:
        """Current-controlled current source.

        gain * I(control_source) flows from ``from_node`` through the source to ``to_node``.
        """
        self._core.add_cccs(name, from_node, to_node, control_source, _value(gain, f"part '{name}': value"))

    def opamp(
        self,
        name: str,
        plus: str,
        minus: str,
        output: str,
        model: str = "ideal",
        open_loop_gain: Value = 1e5,
        gain_bandwidth: Value = 1e6,
        offset: Value = 0.0,
        bias_plus: Value = 0.0,
        bias_minus: Value = 0.0,
        bias_current: Optional[Value] = None,
    ) -> None:
        """Add an op-amp whose output is driven against ground.

        Parameters
        ----------
        name, plus, minus, output : str
            Part name and the non-inverting input, inverting input and output nodes.
        model : {"ideal", "finite_gain", "single_pole"}
            ``ideal``: infinite gain (the inputs sit at equal voltage);
            ``finite_gain``: flat open-loop gain ``open_loop_gain``;
            ``single_pole``: A(s) = A0 / (1 + s A0 / (2 pi GBW)).
        open_loop_gain : float or str
            A0 in V/V.
        gain_bandwidth : float or str
            Gain-bandwidth product in Hz.
        offset : float or str
            Input offset voltage in volts, in series with the + input.
        bias_plus, bias_minus : float or str
            Bias currents drawn by the inputs, in amperes.
        bias_current : float or str, optional
            Sets both bias currents at once.

        Notes
        -----
        Its parameters are named "NAME.open_loop_gain", "NAME.gain_bandwidth",
        "NAME.offset", "NAME.bias_plus" and "NAME.bias_minus" for :meth:`vary`.
        """
        where = f"part '{name}'"
        if bias_current is not None:
            bias_plus = bias_minus = bias_current
        self._core.add_opamp(
            name, plus, minus, output, _word(model, "model"),
            _value(open_loop_gain, where + ": open_loop_gain"),
            _value(gain_bandwidth, where + ": gain_bandwidth"),
            _value(offset, where + ": offset"),
            _value(bias_plus, where + ": bias_plus"),
            _value(bias_minus, where + ": bias_minus"),
        )

    # -- variations, measurements, specs -----------------------------------------------

    def vary(
        self,
        parameters: Union[str, Iterable[str]],
        tolerance: Value,
        distribution: str = "normal",
        sigmas: Optional[float] = None,
        relative: Optional[bool] = None,
    ) -> None:
        """Spread parameters from build to build.

        Parameters
        ----------
        parameters : str or iterable of str
            Parameter names or patterns in which ``*`` matches any run of characters
            other than '.': ``"R*"`` selects R1, RG, ...; ``"U*.offset"`` every op-amp
            offset.
        tolerance : float or str
            Half-width of the tolerance band. Text such as ``"1%"`` or ``"50ppm"`` is
            relative to each nominal value; text such as ``"100u"`` is an absolute amount
            in the parameter's unit. A float is a fraction of nominal (0.01 for 1 %)
            unless ``relative=False``.
        distribution : {"normal", "uniform"}
            ``normal``: the tolerance covers ``sigmas`` standard deviations;
            ``uniform``: flat within +-tolerance.
        sigmas : float, optional
            Standard deviations the tolerance covers (normal only); 3 if not given.
        relative : bool, optional
            Whether a float tolerance is relative (the default) or absolute. Text states
            this itself.
        """
        targets = [parameters] if isinstance(parameters, str) else list(parameters)
        distribution = _word(distribution, "distribution")
        where = "variation of " + ", ".join(repr(t) for t in targets)
        if isinstance(tolerance, str):
            if relative is not None:
                raise TypeError(
                    "relative= applies to a numeric tolerance; text states it itself "
                    "('1%' is relative, '100u' absolute)"
                )
            try:
                value, is_relative = _core.parse_quantity(tolerance)
            except _core.DesignError as error:
                raise _core.DesignError(f"{where}: tolerance: {error}") from None
        else:
            value = _value(tolerance, where + ": tolerance")
            is_relative = True if relative is None else bool(relative)
        if sigmas is not None and distribution != "normal":
            raise _core.DesignError(f"{where}: sigmas applies to the normal distribution only")
        sigmas_value = 3.0 if sigmas is None else _value(sigmas, where + ": sigmas")
        self._core.add_variation(targets, value, is_relative, distribution, sigmas_value)

    def measure(
        self,
        name: str,
        kind: str,
        inputs: Union[str, Sequence[str]] = (),
        output: Nodes = (),
        frequency: Value = 0.0,
    ) -> None:
        """Add a named quantity computed for every build.

        Parameters
        ----------
        name : str
            Name used by specs and in results.
        kind : str
            One of ``gain`` (one input), ``differential_gain``, ``common_mode_gain``,
            ``cmrr`` (two inputs, dB), ``output_offset``, ``input_offset`` (one or two
            inputs, V), ``node_voltage`` (no inputs, DC operating point, V) and
            ``bandwidth`` (one input, -3 dB frequency in Hz).
        inputs : str or sequence of str
            Driving independent sources; for the differential kinds (plus, minus).
        output : str or (str, str)
            Output node, or a pair (plus, minus) for a differential output.
        frequency : float or str, optional
            Frequency of a gain in Hz; 0 (DC) keeps the gain's sign, above 0 it is the
            magnitude.
        """
        input_list = [inputs] if isinstance(inputs, str) else list(inputs)
        output_list = [output] if isinstance(output, str) else list(output)
        self._core.add_measurement(
            name, _word(kind, "kind"), input_list, output_list,
            _value(frequency, f"measurement '{name}': frequency"),
        )

    def spec(self, measurement: str, min: Optional[Value] = None, max: Optional[Value] = None) -> None:  # noqa: A002
        """Limit a measurement; a build passes when every spec holds.

        Parameters
        ----------
        measurement : str
            Name of a measurement.
        min, max : float or str, optional
            Inclusive limits; give at least one.
        """
        where = f"spec '{measurement}'"
        low = -math.inf if min is None else _value(min, where + ": min")
        high = math.inf if max is None else _value(max, where + ": max")
        self._core.add_spec(measurement, low, high)

    def compile(self) -> "Study":
        """Check the design and lay out its solves.

        Returns
        -------
        Study
            Immutable; later changes to this design do not affect it.

        Raises
        ------
        DesignError
            A variation, measurement or spec does not fit the circuit (the message names
            it and what would be valid).
        CircuitError
            The circuit cannot be solved as drawn.
        """
        from ._study import Study

        return Study._from_core(_core.Study(self._core))


def _value(value: Value, what: str) -> float:
    """A float from a number or engineering text, with errors that say where."""
    if isinstance(value, str):
        try:
            return _core.parse_value(value)
        except _core.DesignError as error:
            raise _core.DesignError(f"{what}: {error}") from None
    if isinstance(value, bool) or not isinstance(value, Real):
        raise TypeError(f"{what}: expected a number or text such as '4.99k', got {value!r}")
    return float(value)


def _word(value: str, what: str) -> str:
    if not isinstance(value, str):
        raise TypeError(f"{what} must be a string, got {value!r}")
    return value


def _whole(value: int, what: str, minimum: int) -> int:
    if isinstance(value, bool) or not hasattr(value, "__index__"):
        raise TypeError(f"{what} must be a whole number, got {value!r}")
    value = value.__index__()
    if value < minimum:
        raise _core.RunError(f"{what} must be a whole number >= {minimum} (got {value})")
    return value

