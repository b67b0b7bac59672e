"""Building a design in code, or reading one from lotwise's TOML design-file schema."""

from __future__ import annotations

import functools
import math
import os
from numbers import Real
from typing import TYPE_CHECKING, Any, Dict, Iterable, List, Optional, Sequence, Tuple, Union

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
        # (text, source name) while the design is exactly what that text says; a change
        # made in code clears it. lotwise.distributed sends the text to its workers.
        self._source: Optional[Tuple[str, str]] = None

    @classmethod
    def from_file(cls, path: Union[str, "os.PathLike[str]"]) -> "Design":
        """Read a design file without compiling it, so it can still be changed."""
        name = os.fspath(path)
        design = cls._wrap(_core.load_design(name))
        try:
            with open(name, encoding="utf-8") as f:
                design._source = (f.read(), name)
        except (OSError, UnicodeDecodeError):  # read by the core already; keep no text
            design._source = None
        return design

    @classmethod
    def from_text(cls, text: str, source_name: str = "<design>") -> "Design":
        """Read a design from TOML text without compiling it."""
        return cls._wrap(_core.parse_design(text, source_name), (text, source_name))

    @classmethod
    def _wrap(cls, core: "_core.Design", source: Optional[Tuple[str, str]] = None) -> "Design":
        design = cls.__new__(cls)
        design._core = core
        design._source = source
        return design

    def copy(self) -> "Design":
        """An independent copy."""
        return Design._wrap(self._core.copy(), self._source)

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
    def sampler(self) -> str:
        """Default sampler: ``monte_carlo``, ``sobol`` or ``latin_hypercube``."""
        return self._core.sampler

    @sampler.setter
    def sampler(self, value: str) -> None:
        self._core.sampler = _word(value, "sampler")

    @property
    def replicates(self) -> int:
        """Default replicates (0: 1 for monte_carlo, 16 for the others)."""
        return self._core.replicates

    @replicates.setter
    def replicates(self, value: int) -> None:
        self._core.replicates = _whole(value, "replicates", 0)

    @property
    def confidence(self) -> float:
        """Default confidence level of the reported intervals."""
        return self._core.confidence

    @confidence.setter
    def confidence(self, value: float) -> None:
        self._core.confidence = _value(value, "confidence")

    @property
    def tolerance_digits(self) -> int:
        """Default adaptive stop by numerical tolerance: digits (0: off, 1 to 3)."""
        return self._core.tolerance_digits

    @tolerance_digits.setter
    def tolerance_digits(self, value: int) -> None:
        self._core.tolerance_digits = _whole(value, "tolerance_digits", 0)

    @property
    def builds_per_lot(self) -> int:
        """Default builds made from one lot of parts (0: each build its own lot)."""
        return self._core.builds_per_lot

    @builds_per_lot.setter
    def builds_per_lot(self, value: int) -> None:
        self._core.builds_per_lot = _whole(value, "builds_per_lot", 0)

    @property
    def target_half_width(self) -> float:
        """Default adaptive stop: the yield interval half-width to reach (0: off)."""
        return self._core.target_half_width

    @target_half_width.setter
    def target_half_width(self, value: Value) -> None:
        if isinstance(value, str):
            number, _ = _amount(value, "target_half_width", True)
        else:
            number = _value(value, "target_half_width")
        self._core.target_half_width = number

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
        supply_high: Optional[Value] = None,
        supply_low: Optional[Value] = None,
        headroom: Optional[Value] = None,
        headroom_high: Optional[Value] = None,
        headroom_low: Optional[Value] = None,
        output_high: Optional[Value] = None,
        output_low: Optional[Value] = None,
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
        supply_high, supply_low : float or str, optional
            Supply rails in volts. The output reaches ``supply_high - headroom_high`` and
            ``supply_low + headroom_low``. A side with neither a supply nor an output
            level is unlimited: the op-amp never saturates there.
        headroom : float or str, optional
            Sets both headrooms at once (V, >= 0).
        headroom_high, headroom_low : float or str, optional
            How close the output gets to each rail, in volts (default 0).
        output_high, output_low : float or str, optional
            The output's high and low levels directly, in volts, instead of a supply and
            headroom on that side.

        Notes
        -----
        Its parameters are named "NAME.open_loop_gain", "NAME.gain_bandwidth",
        "NAME.offset", "NAME.bias_plus" and "NAME.bias_minus" for :meth:`vary`, and for
        each limited side "NAME.supply_high" with "NAME.headroom_high", or
        "NAME.output_high" (likewise ``_low``). Linear measurements of a build whose
        op-amp output would pass its limits are withheld and the build counted as
        saturated; comparators and Schmitt triggers are measured with the trip-point
        kinds (see :meth:`measure`).
        """
        where = f"part '{name}'"
        if bias_current is not None:
            bias_plus = bias_minus = bias_current
        if headroom is not None:
            if headroom_high is not None or headroom_low is not None:
                raise _core.DesignError(
                    f"{where}: give headroom or headroom_high / headroom_low, not both"
                )
            headroom_high = headroom_low = headroom
        for side, supply, level in (("high", supply_high, output_high),
                                    ("low", supply_low, output_low)):
            if supply is not None and level is not None:
                raise _core.DesignError(
                    f"{where}: give supply_{side} (with headroom) or output_{side}, not both"
                )

        def optional(value: Optional[Value], what: str, default: float) -> float:
            return default if value is None else _value(value, where + ": " + what)

        self._core.add_opamp(
            name, plus, minus, output, _word(model, "model"),
            _value(open_loop_gain, where + ": open_loop_gain"),
            _value(gain_bandwidth, where + ": gain_bandwidth"),
            _value(offset, where + ": offset"),
            _value(bias_plus, where + ": bias_plus"),
            _value(bias_minus, where + ": bias_minus"),
            supply_high=optional(supply_high, "supply_high", math.inf),
            supply_low=optional(supply_low, "supply_low", -math.inf),
            headroom_high=optional(headroom_high, "headroom_high", 0.0),
            headroom_low=optional(headroom_low, "headroom_low", 0.0),
            output_high=optional(output_high, "output_high", math.inf),
            output_low=optional(output_low, "output_low", -math.inf),
        )

    # -- variations, measurements, specs -----------------------------------------------

    def vary(
        self,
        parameters: Union[str, Iterable[str]],
        tolerance: Optional[Value] = None,
        distribution: str = "normal",
        sigmas: Optional[float] = None,
        relative: Optional[bool] = None,
        *,
        inner_tolerance: Optional[Value] = None,
        lot_tolerance: Optional[Value] = None,
        lot_distribution: str = "normal",
        ratio_tolerance: Optional[Value] = None,
        tempco: Optional[Value] = None,
        tempco_tolerance: Optional[Value] = None,
        tempco_distribution: str = "uniform",
        tempco_tracking: Optional[Value] = None,
    ) -> None:
        """Spread parameters from build to build, lot to lot, and with temperature.

        The keys are those of the design file's ``[[vary]]`` (docs/design-file.md).

        Parameters
        ----------
        parameters : str or iterable of str
            Parameter names or patterns in which ``*`` matches any run of characters
            other than '.': ``"R*"`` selects R1, RG, ...; ``"U*.offset"`` every op-amp
            offset.
        tolerance : float or str
            Half-width of the tolerance band. Text such as ``"1%"``, ``"50ppm"`` or an
            IEC 60062 letter (``"F"`` is 1 %) is relative to each nominal value; text
            such as ``"100u"`` is an absolute amount in the parameter's unit. A float is
            a fraction of nominal (0.01 for 1 %) unless ``relative=False``. Not given
            for ``distribution="fixed"``.
        distribution : str
            The law of each part's own deviation: ``normal`` (the tolerance covers
            ``sigmas`` standard deviations), ``uniform``, ``triangular``,
            ``truncated_normal`` (normal cut at the tolerance), ``log_normal``,
            ``binned`` (with ``inner_tolerance`` sorted out) or ``fixed`` (no spread).
        sigmas : float, optional
            Standard deviations the tolerance covers, for the normal-shaped laws and
            normal lot or coefficient spreads; 3 if not given.
        relative : bool, optional
            Whether float amounts (tolerance, inner and lot tolerance) are relative (the
            default) or absolute. Text states this itself.
        inner_tolerance : float or str, optional
            ``binned`` only: half-width of the tighter class that was sorted out.
        lot_tolerance : float or str, optional
            A lot-to-lot deviation shared by all parts of this entry in one build.
        lot_distribution : str, optional
            Law of the lot deviation (default ``normal``).
        ratio_tolerance : float or str, optional
            A matched network: the ratio of any two members spreads only by this
            (relative, at ``sigmas``).
        tempco : float or str, optional
            Temperature coefficient per kelvin: relative (``"50ppm/K"``, or a float
            fraction) or absolute in the parameter's unit (``"2uV/K"``).
        tempco_tolerance : float or str, optional
            Part-to-part spread of the coefficient about ``tempco``, same kind.
        tempco_distribution : str, optional
            Law of that spread (default ``uniform``).
        tempco_tracking : float or str, optional
            Matched network only: how far the members' coefficients may differ.

        Raises
        ------
        DesignError
            A malformed amount, amounts of mixed kinds, or ``sigmas`` where no law uses
            it. Whether the keys fit together and the patterns match is checked by
            :meth:`compile`.
        """
        targets = [parameters] if isinstance(parameters, str) else list(parameters)
        distribution = _word(distribution, "distribution")
        where = "variation of " + ", ".join(repr(t) for t in targets)
        fixed = distribution == "fixed"
        if tolerance is None and not fixed:
            raise TypeError(f"{where}: give a tolerance (or distribution='fixed')")
        if tolerance is not None and fixed:
            raise _core.DesignError(
                f"{where}: a fixed parameter takes no tolerance (lot_tolerance and tempco "
                "still apply)"
            )
        # Relative or absolute is stated once: every amount must agree.
        kind: List[Optional[bool]] = [None]

        def amount(value: Optional[Value], key: str) -> float:
            if value is None:
                return 0.0
            number, is_relative = _amount(value, f"{where}: {key}", relative)
            if kind[0] is not None and is_relative != kind[0]:
                raise _core.DesignError(
                    f"{where}: {key} must be " + ("relative, like the tolerance"
                                                  if kind[0] else "absolute, like the tolerance")
                )
            kind[0] = is_relative
            return number

        if isinstance(tolerance, str) and relative is not None:
            raise TypeError(
                "relative= applies to a numeric tolerance; text states it itself "
                "('1%' is relative, '100u' absolute)"
            )
        tolerance_value = amount(tolerance, "tolerance")
        inner = amount(inner_tolerance, "inner_tolerance")
        lot = amount(lot_tolerance, "lot_tolerance")
        is_relative = True if kind[0] is None else kind[0]
        ratio = 0.0
        if ratio_tolerance is not None:
            ratio, ratio_relative = _amount(ratio_tolerance, f"{where}: ratio_tolerance", True)
            if not ratio_relative:
                raise _core.DesignError(
                    f"{where}: ratio_tolerance must be relative (\"0.01%\", \"L\")")
        coefficient_kind: List[Optional[bool]] = [None]

        def coefficient(value: Optional[Value], key: str) -> float:
            if value is None:
                return 0.0
            number, is_rel = _per_kelvin(value, f"{where}: {key}")
            if coefficient_kind[0] is not None and is_rel != coefficient_kind[0]:
                raise _core.DesignError(
                    f"{where}: {key} must be given like tempco (both relative, as \"ppm\", "
                    "or both absolute)"
                )
            coefficient_kind[0] = is_rel
            return number

        tempco_value = coefficient(tempco, "tempco")
        tempco_spread = coefficient(tempco_tolerance, "tempco_tolerance")
        tracking = coefficient(tempco_tracking, "tempco_tracking")
        lot_law = _word(lot_distribution, "lot_distribution")
        tempco_law = _word(tempco_distribution, "tempco_distribution")
        if sigmas is not None:
            used = (distribution in _NORMAL_SHAPED
                    or (lot > 0 and lot_law in _NORMAL_SHAPED)
                    or (tempco_spread > 0 and tempco_law in _NORMAL_SHAPED))
            if not used:
                raise _core.DesignError(
                    f"{where}: sigmas applies to the normal-shaped distributions only (normal, "
                    "truncated_normal, log_normal, binned, or a normal lot or tempco spread)"
                )
        sigmas_value = 3.0 if sigmas is None else _value(sigmas, where + ": sigmas")
        self._core.add_variation(
            targets, tolerance_value, is_relative, distribution, sigmas_value,
            inner_tolerance=inner, lot_tolerance=lot, lot_distribution=lot_law,
            ratio_tolerance=ratio, tempco=tempco_value,
            tempco_relative=True if coefficient_kind[0] is None else coefficient_kind[0],
            tempco_tolerance=tempco_spread, tempco_distribution=tempco_law,
            tempco_tracking=tracking,
        )

    def correlate(self, parameters: Iterable[str], coefficient: float) -> None:
        """Correlate the part-to-part deviations of parameters (a Gaussian copula).

        Every pair of the listed parameters (names or patterns, at least two) gets
        ``coefficient`` (strictly between -1 and 1) as the correlation of the normal
        scores of their own deviations; for normal spreads, of the values. Each needs
        a :meth:`vary` entry with a spread of its own. Checked by :meth:`compile`.
        """
        names = [parameters] if isinstance(parameters, str) else list(parameters)
        self._core.add_correlation(names, _value(coefficient, "correlation: coefficient"))

    def set_temperature(
        self,
        operating: Union[None, Value, Sequence[Value]] = None,
        range: Optional[Tuple[Value, Value]] = None,  # noqa: A002 - the design file's key
        reference: Value = 25.0,
    ) -> None:
        """Set the operating temperature, in degrees Celsius.

        Parameters
        ----------
        operating : float or sequence of float, optional
            Evaluate every build at each of these temperatures; a build passes only if
            it passes at all of them (:attr:`Result.temperatures` gives each).
        range : (float, float), optional
            Instead, each build draws its temperature uniformly in [low, high].
        reference : float, optional
            Where nominal values and tolerances hold (25 by default).

        With neither, every build is evaluated at ``reference``.
        """
        if operating is not None and range is not None:
            raise _core.DesignError("temperature: give operating or range, not both")
        points: List[float] = []
        if operating is not None:
            items = [operating] if isinstance(operating, (str, Real)) else list(operating)
            points = [_value(t, "temperature: operating") for t in items]
        low = high = 0.0
        if range is not None:
            if len(range) != 2:
                raise _core.DesignError("temperature: range takes [low, high]")
            low = _value(range[0], "temperature: range")
            high = _value(range[1], "temperature: range")
            if not low < high:
                raise _core.DesignError(
                    f"temperature: range must have low < high (got [{low:g}, {high:g}])"
                )
        self._core.set_temperature(_value(reference, "temperature: reference"), points,
                                   range is not None, low, high)

    @property
    def temperature(self) -> Dict[str, object]:
        """The operating temperature: reference, operating list, drawn range."""
        return self._core.temperature

    def sweep_axis(
        self, values: Sequence[Value], *, nominal: Optional[str] = None,
        tolerance: Optional[str] = None,
    ) -> None:
        """Add an axis for :meth:`Study.sweep` (the design file's ``[[sweep]]``).

        Give exactly one of ``nominal`` (the nominal value of the parameters a name or
        pattern selects) or ``tolerance`` (the tolerance of every variation covering
        them); ``values`` are the settings (text such as ``"1%"`` or ``"2k"`` allowed).
        """
        setting, parameter = _axis(nominal, tolerance)
        self._core.add_sweep_axis(setting, parameter, _axis_values(values, setting, parameter))

    @property
    def sweep_axes(self) -> List[Tuple[str, str, List[float]]]:
        """The sweep axes as (setting, parameter, values)."""
        return self._core.sweep_axes

    @property
    def variations(self) -> List[Dict[str, object]]:
        """The variations as written, one dict of the design file's keys each."""
        return self._core.variations

    @property
    def correlations(self) -> List[Dict[str, object]]:
        """The correlations: parameters and coefficient."""
        return self._core.correlations

    @property
    def measurements(self) -> List[Dict[str, object]]:
        """The measurements: name, kind, inputs, output, frequency, target, opamp."""
        return self._core.measurements

    @property
    def specs(self) -> List[Tuple[str, float, float]]:
        """The specs as (measurement, min, max); an absent limit is infinite."""
        return self._core.specs

    @property
    def opamps(self) -> List[str]:
        """Names of the op-amps."""
        return self._core.opamps

    def measure(
        self,
        name: str,
        kind: str,
        inputs: Union[str, Sequence[str]] = (),
        output: Nodes = (),
        frequency: Value = 0.0,
        *,
        target: Optional[Value] = None,
        opamp: Optional[str] = None,
    ) -> None:
        """Add a named quantity computed for every build.

        Parameters
        ----------
        name : str
            Name used by specs and in results.
        kind : str
            Linear kinds: ``gain`` (one input), ``differential_gain``,
            ``common_mode_gain``, ``cmrr`` (two inputs, dB), ``output_offset``,
            ``input_offset`` (one or two inputs, V), ``node_voltage`` (no inputs, DC
            operating point, V), ``bandwidth`` (one input, -3 dB frequency in Hz),
            ``phase`` (one or two inputs, degrees at ``frequency`` > 0) and
            ``gain_error`` (one or two inputs, (gain - target) / target).
            Trip-point kinds of a deciding op-amp ``opamp`` driven by one voltage source:
            ``rising_threshold``, ``falling_threshold``, ``hysteresis``,
            ``threshold_centre`` (V), ``output_high`` and ``output_low`` (V).
        inputs : str or sequence of str
            Driving independent sources; for the differential kinds (plus, minus).
        output : str or (str, str)
            Output node, or a pair (plus, minus) for a differential output. Thresholds
            take none; ``output_high`` / ``output_low`` default to the op-amp's output.
        frequency : float or str, optional
            Frequency of a gain in Hz; 0 (DC) keeps the gain's sign, above 0 it is the
            magnitude.
        target : float or str, optional
            ``gain_error`` only: the intended gain.
        opamp : str, optional
            Trip-point kinds only: the deciding op-amp (it needs output limits).
        """
        input_list = [inputs] if isinstance(inputs, str) else list(inputs)
        output_list = [output] if isinstance(output, str) else list(output)
        where = f"measurement '{name}'"
        self._core.add_measurement(
            name, _word(kind, "kind"), input_list, output_list,
            _value(frequency, where + ": frequency"),
            target=0.0 if target is None else _value(target, where + ": target"),
            opamp="" if opamp is None else _word(opamp, "opamp"),
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

        study = Study._from_core(_core.Study(self._core))
        study._design_source = self._source
        return study


def _clears_source(method: Any) -> Any:
    """Wraps a method that changes the design: the text it was read from no longer
    describes it."""

    @functools.wraps(method)
    def changed(self: "Design", *args: Any, **kwargs: Any) -> Any:
        result = method(self, *args, **kwargs)
        self._source = None
        return result

    return changed


for _name in ("set_nominal", "resistor", "capacitor", "inductor", "voltage_source",
              "current_source", "vcvs", "vccs", "ccvs", "cccs", "opamp", "vary", "correlate",
              "set_temperature", "sweep_axis", "measure", "spec"):
    setattr(Design, _name, _clears_source(getattr(Design, _name)))
for _name in ("title", "samples", "seed", "threads", "sampler", "replicates", "confidence",
              "target_half_width", "tolerance_digits", "builds_per_lot"):
    _property = getattr(Design, _name)
    setattr(Design, _name, _property.setter(_clears_source(_property.fset)))
del _name, _property


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



_NORMAL_SHAPED = ("normal", "truncated_normal", "log_normal", "binned")


def _amount(value: Value, what: str, relative: Optional[bool]) -> Tuple[float, bool]:
    """A tolerance amount and whether it is relative: "1%", "50ppm", a letter, "100u"."""
    if isinstance(value, str):
        text = value.strip()
        if len(text) == 1 and "A" <= text <= "Z":
            try:
                return _core.tolerance_of_letter(text), True
            except _core.DesignError as error:
                raise _core.DesignError(f"{what}: {error}") from None
        try:
            return _core.parse_quantity(text)
        except _core.DesignError as error:
            raise _core.DesignError(f"{what}: {error}") from None
    return _value(value, what), True if relative is None else bool(relative)


def _per_kelvin(value: Value, what: str) -> Tuple[float, bool]:
    """A temperature coefficient: "50ppm/K" (relative) or "2uV/K" (absolute); a float is
    relative."""
    if isinstance(value, str):
        text = value.strip()
        for unit in ("/K", "/degC", "/\u00b0C"):
            if text.endswith(unit) and len(text) > len(unit):
                text = text[: -len(unit)]
                break
        try:
            return _core.parse_quantity(text)
        except _core.DesignError as error:
            raise _core.DesignError(f"{what}: {error}") from None
    return _value(value, what), True


def _axis(nominal: Optional[str], tolerance: Optional[str]) -> Tuple[str, str]:
    if (nominal is None) == (tolerance is None):
        raise TypeError("a sweep axis takes exactly one of nominal= or tolerance=")
    if nominal is not None:
        return "nominal", _word(nominal, "nominal")
    return "tolerance", _word(tolerance, "tolerance")  # type: ignore[arg-type]


def _axis_values(values: Sequence[Value], setting: str, parameter: str) -> List[float]:
    if isinstance(values, (str, Real)):
        values = [values]
    where = f"sweep of '{parameter}'"
    out = []
    for v in values:
        if setting == "tolerance":
            out.append(_amount(v, where, None)[0])
        else:
            out.append(_value(v, where))
    if not out:
        raise _core.DesignError(f"{where}: give at least one value")
    return out
