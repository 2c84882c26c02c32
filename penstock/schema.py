"""The case-folder schema: every key of ``site.toml``, its unit kind, default and range.

This table is the single source of truth for the loader (:mod:`penstock.case`),
the template written by ``penstock new`` and the reference in the README.
Defaults are written the way a user would write them, with their unit.

Kinds are those of :data:`penstock.units.SI_UNITS`, plus ``text``, ``choice``,
``file``, ``integer`` and lists: ``flow_list``, ``length_list``, ``time_list``,
``choice_list``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

#: Plausibility bounds of every quantity by kind, in SI, for the fields that set none of
#: their own: far beyond any penstock, they stop absurd values (1e308 m, 1e9 s) before
#: they reach the physics.  Elevations have their own, tighter bounds.
KIND_LIMITS: dict[str, tuple[float | None, float | None]] = {
    "length": (-1e6, 1e6),            # 1,000 km
    "area": (0.0, 1e6),
    "flow": (0.0, 1e5),               # plant flows [m^3/s]
    "velocity": (0.0, 1e4),
    "angle": (-2 * math.pi, 2 * math.pi),
    "time": (0.0, 3600.0),            # closures and knees [s]
    "age": (0.0, 1000.0),
    "pressure": (0.0, 1e12),
    "stress": (0.0, 1e12),
    "density": (0.0, 1e5),
    "moment_of_inertia": (0.0, 1e10),
    "rotational_speed": (0.0, 1e5),
    "frequency": (0.0, 1e3),
    "dimensionless": (-1e6, 1e6),
    "fraction": (-100.0, 100.0),
    "price_per_energy": (0.0, 1e9),
    "price_per_mass": (0.0, 1e12),
    "price_per_length": (0.0, 1e12),
    "price_per_area": (0.0, 1e12),
    "roughness_growth": (0.0, 0.01),
    "temperature": (0.0, 100.0),
}

#: Lowest efficiency taken as meant (common practice: no turbine, generator, gearbox or
#: transformer of a working plant is below it); lower values are typing slips such as
#: "0.9 %" for 90 %.
PLAUSIBLE_EFFICIENCY = 0.3

#: Elevation bounds [m], on any datum (a local survey datum may put the intake at 0 m and
#: the station far below): wider than any site's levels, narrow enough to stop absurd ones.
ELEVATION = (-20000.0, 20000.0)

#: Bounds of the CSV columns by column name, in SI (negative flows etc. are checked by
#: the loader with their own messages).
COLUMN_BOUNDS: dict[str, tuple[float | None, float | None]] = {
    "chainage": (-1e6, 1e6),
    "elevation": ELEVATION,
    "ground": ELEVATION,
    "level": ELEVATION,
    "flow": (None, 1e6),              # river flows [m^3/s]; the Amazon's floods are ~3e5
    "time": (None, 3600.0),
    "relative flow": (None, 100.0),
    "exceedance": (None, None),       # 0 to 100 %, checked with its own message
    "opening": (None, None),
    "efficiency": (None, None),
    "size": (0.01, 20.0),             # pipe sizes of a price table [m]
    "class": (1e4, 1e8),              # rated pressures of a price table [Pa]
    "price": (0.0, 1e8),              # pipe prices [currency/m]
}


@dataclass(frozen=True)
class Field:
    """One key of the case file."""

    name: str
    kind: str
    description: str
    default: object = None          # None: required, unless `optional`
    optional: bool = False          # may be absent, with no default
    minimum: float | None = None    # in SI units of the kind
    maximum: float | None = None
    exclusive_minimum: bool = False
    choices: tuple[str, ...] = ()
    columns: tuple[tuple[str, str], ...] = ()  # for files: (column name, unit kind)
    max_items: int = 20             # lists: most items
    max_chars: int = 200            # text: most characters
    max_rows: int = 10_000          # files: most data rows

    def __post_init__(self):
        # every quantity is bounded: a field without its own bound takes its kind's
        kind = self.kind[:-5] if self.kind.endswith("_list") else self.kind
        lo, hi = KIND_LIMITS.get(kind, (None, None))
        if self.minimum is None and lo is not None:
            object.__setattr__(self, "minimum", lo)
        if self.maximum is None and hi is not None:
            object.__setattr__(self, "maximum", hi)

    @property
    def required(self) -> bool:
        return self.default is None and not self.optional


@dataclass(frozen=True)
class Section:
    """A TOML table (``[name]``) or array of tables (``[[name]]``)."""

    name: str
    description: str
    fields: tuple[Field, ...]
    array: bool = False
    required: bool = True
    extra_from_registry: bool = False   # [[loss]]: per-kind keys come from fittings.LOSS_KINDS
    max_tables: int = 500               # [[name]] arrays: most tables
    fields_by_name: dict = field(init=False, repr=False, compare=False, default=None)

    def __post_init__(self):
        object.__setattr__(self, "fields_by_name", {f.name: f for f in self.fields})


TURBINE_TYPE_CHOICES = ("pelton", "turgo", "crossflow", "francis", "kaplan", "propeller")

#: Columns of a pipe price table of the material comparison (diameter_study.*_prices).
PRICE_COLUMNS = (("size", "length"), ("class", "pressure"), ("price", "price_per_length"))

SECTIONS: tuple[Section, ...] = (
    Section("site", "Who and where.", (
        Field("name", "text", "Site name, printed on every report page.", max_chars=120),
        Field("note", "text", "Free text shown on the summary sheet.", default="",
              max_chars=2000),
        Field("units", "choice", "Unit system of the reports.", default="si", choices=("si", "us")),
    )),
    Section("water", "The water and the air at the site.", (
        Field("temperature", "temperature", "Water temperature.", default="10 degC",
              minimum=0.0, maximum=40.0),
        Field("altitude", "length", "Site altitude above mean sea level, for the atmospheric "
              "pressure (ISO 2533 standard atmosphere).", default="0 m", minimum=-400.0,
              maximum=5000.0),
    )),
    Section("levels", "Water levels.", (
        Field("headwater", "length", "Normal headwater (intake pond or forebay) level.",
              minimum=ELEVATION[0], maximum=ELEVATION[1]),
        Field("headwater_min", "length", "Minimum operating headwater level; the pressure and "
              "submergence checks hold at it. Defaults to the normal level.", optional=True,
              minimum=ELEVATION[0], maximum=ELEVATION[1]),
        Field("headwater_max", "length", "Highest headwater (flood) level; the design "
              "pressure line holds at it. Defaults to the normal level, with a caution.",
              optional=True, minimum=ELEVATION[0], maximum=ELEVATION[1]),
        Field("tailwater", "length", "Constant tailwater level; give either this or a "
              "tailwater_rating (whose level at the design flow is then the reference).",
              optional=True, minimum=ELEVATION[0], maximum=ELEVATION[1]),
        Field("tailwater_rating", "file", "CSV of tailwater level against river flow.",
              optional=True, columns=(("flow", "flow"), ("level", "length"))),
        Field("headwater_rating", "file", "CSV of headwater level against river flow (e.g. "
              "over a weir crest); replaces the constant headwater in the energy "
              "computation.", optional=True, columns=(("flow", "flow"), ("level", "length"))),
        Field("headwater_series", "file", "CSV of headwater level by date, on the flow "
              "record's dates; replaces the constant headwater in the energy computation.",
              optional=True, columns=(("date", "date"), ("level", "length")),
              max_rows=1_000_000),
    )),
    Section("route", "The penstock route.", (
        Field("profile", "file", "CSV of the pipe centreline: chainage (horizontal distance from "
              "the intake) and elevation; an optional ground column is drawn on the route chart.",
              columns=(("chainage", "length"), ("elevation", "length")), max_rows=100_000),
        Field("pressure_margin", "length", "Smallest acceptable pressure head above the pipe "
              "crown at any steady flow.", default="2 m", minimum=0.0, maximum=100.0),
        Field("intake_approach", "choice", "Flow approach to the intake, for Gordon's "
              "submergence criterion.", default="symmetric", choices=("symmetric", "asymmetric")),
        Field("service_life", "age", "Age at which the aged grade lines are drawn, for pipes "
              "with a roughness_growth.", default="40 year", minimum=0.0,
              exclusive_minimum=True, maximum=200.0),
    )),
    Section("pipe", "Pipe segments in series, from the intake down. One [[pipe]] table each.", (
        Field("from", "length", "Chainage where the segment starts."),
        Field("to", "length", "Chainage where the segment ends."),
        Field("diameter", "length", "Inside diameter.", minimum=0.0, exclusive_minimum=True,
              maximum=20.0),
        Field("material", "text", "Pipe material, a name from the roughness table "
              "(see the README).", max_chars=60),
        Field("roughness", "length", "Absolute roughness; defaults to the material's value.",
              optional=True, minimum=0.0, maximum=0.05),
        Field("condition", "choice", "Which roughness of the material to use.", default="new",
              choices=("new", "aged")),
        Field("wall_thickness", "length", "Wall thickness, for the wave speed and the "
              "own-wall check.", optional=True, minimum=0.0, exclusive_minimum=True, maximum=0.5),
        Field("roughness_growth", "roughness_growth", "Linear growth of the roughness with age "
              "(Colebrook & White 1937); when given, grade lines after route.service_life "
              "years are drawn too. Typical rates (Lamont 1981): 0.025 mm/year slight to "
              "0.6 mm/year severe.", optional=True, minimum=0.0, maximum=0.005),
    ), array=True),
    Section("loss", "Local losses, each at a chainage. One [[loss]] table each; the keys "
            "beyond those listed here depend on the kind (see the README).", (
        Field("kind", "text", "Kind of loss: entrance, trashrack, bend, valve, contraction, "
              "expansion, bifurcation, exit or custom."),
        Field("at", "length", "Chainage of the loss."),
        Field("label", "text", "Name shown in the loss breakdown.", optional=True,
              max_chars=120),
        Field("k", "dimensionless", "A loss coefficient given by the user; it overrides the "
              "published method.", optional=True, minimum=0.0, maximum=100.0),
    ), array=True, required=False, extra_from_registry=True),
    Section("flows", "Plant flows and the river's flow record.", (
        Field("record", "file", "CSV of the river flow record: date (daily or hourly) and flow.",
              optional=True, columns=(("date", "date"), ("flow", "flow")),
              max_rows=1_000_000),
        Field("duration_table", "file", "CSV flow-duration table (exceedance, flow), used "
              "when no dated record exists; it is turned into a representative hourly year.",
              optional=True, columns=(("exceedance", "fraction"), ("flow", "flow"))),
        Field("design", "flow", "Design (rated) plant flow.", minimum=0.0,
              exclusive_minimum=True),
        Field("maximum", "flow", "Maximum plant flow; defaults to the design flow.",
              optional=True, minimum=0.0, exclusive_minimum=True),
        Field("minimum", "flow", "Minimum turbine flow; defaults to the turbine type's minimum "
              "fraction of one unit's design flow.", optional=True, minimum=0.0),
        Field("extra", "flow_list", "Further flows at which to draw grade lines.", default=[],
              max_items=12),
        Field("residual", "flow", "Residual (environmental) flow left in the river.",
              default="0 m^3/s", minimum=0.0),
        Field("residual_monthly", "flow_list", "Twelve monthly residual flows, January to "
              "December; the larger of this and the other residual rules governs.",
              default=[], max_items=12),
        Field("residual_percent", "fraction", "Residual flow as a fraction of the mean river "
              "flow; the larger of this and the other residual rules governs.",
              default="0 %", minimum=0.0, maximum=1.0),
        Field("firm_exceedance", "fraction", "Exceedance of the firm power (e.g. 95 %).",
              default="95 %", minimum=0.5, maximum=1.0),
        Field("gaps", "choice", "What to do with gaps in the flow record: refuse the record, "
              "or fill them (linear: straight line in time; previous: last value carried "
              "forward; monthly_mean: mean of the same calendar month). Filled gaps are "
              "listed in the inputs and the cautions.", default="refuse",
              choices=("refuse", "linear", "previous", "monthly_mean")),
    )),
    Section("turbine", "The generating units.", (
        Field("type", "choice", "Turbine type.", choices=TURBINE_TYPE_CHOICES),
        Field("units", "integer", "Number of identical units.", default=1, minimum=1,
              maximum=12),
        Field("peak_efficiency", "fraction", "Best turbine efficiency.", default=0.90,
              minimum=PLAUSIBLE_EFFICIENCY, maximum=1.0),
        Field("generator_efficiency", "fraction", "Generator efficiency.", default=0.96,
              minimum=PLAUSIBLE_EFFICIENCY, maximum=1.0),
        Field("transformer_efficiency", "fraction", "Step-up transformer efficiency.",
              default=0.99, minimum=PLAUSIBLE_EFFICIENCY, maximum=1.0),
        Field("gearbox_efficiency", "fraction", "Gearbox efficiency (1 for direct drive).",
              default=1.0, minimum=PLAUSIBLE_EFFICIENCY, maximum=1.0),
        Field("availability", "fraction", "Fraction of time the plant is available (outages).",
              default=0.97, minimum=0.1, maximum=1.0),
        Field("efficiency_table", "file", "CSV of turbine efficiency against relative flow "
              "(Q / design flow of one unit); replaces the type's typical curve.",
              optional=True, columns=(("relative flow", "dimensionless"),
                                      ("efficiency", "dimensionless"))),
        Field("speed", "rotational_speed", "Runner speed, for the specific speed; when absent "
              "the synchronous speed nearest the middle of the type's range is assumed.",
              optional=True, minimum=0.0, exclusive_minimum=True, maximum=5000.0),
        Field("grid_frequency", "frequency", "Grid frequency, for the synchronous speeds.",
              default="50 Hz", choices=(), minimum=40.0, maximum=70.0),
        Field("runner_elevation", "length", "Runner centreline elevation, for the setting "
              "(cavitation or flooding) check.", optional=True, minimum=ELEVATION[0],
              maximum=ELEVATION[1]),
    )),
    Section("draft_tube", "A conical draft tube (gradual expansion) at the reaction-turbine "
            "outlet. The turbine efficiency curve is taken as the machine's with its "
            "runner-outlet velocity head lost, so without this section nothing more is "
            "charged at the outlet, and with it the head the cone recovers over an abrupt "
            "exit (Gibson) is added to the net head. Leave it out when the efficiency curve "
            "already includes the draft tube (a whole-machine curve).", (
        Field("inlet_diameter", "length", "Diameter at the runner outlet (draft-tube inlet).",
              minimum=0.0, exclusive_minimum=True, maximum=20.0),
        Field("area_ratio", "dimensionless", "Outlet over inlet area.", minimum=1.0,
              maximum=16.0),
        Field("cone_angle", "angle", "Total included cone angle (Gibson's data: 5.5 to 180 "
              "deg).", minimum=0.0959931088596881, maximum=3.141592653589793),
    ), required=False),
    Section("economics", "Money.", (
        Field("currency", "text", "Currency code printed beside every price.", default="USD",
              max_chars=12),
        Field("energy_price", "price_per_energy", "Value of energy sold.", default="0.08 /kWh",
              minimum=0.0),
        Field("discount_rate", "fraction", "Real discount rate.", default="8 %",
              minimum=-0.99, maximum=1.0),
        Field("life", "age", "Economic life.", default="40 year", minimum=0.0,
              exclusive_minimum=True, maximum=200.0),
    ), required=False),
    Section("wall", "Steel wall design along the route.", (
        Field("grade", "choice", "Steel grade of the wall (allowable stress, modulus, density "
              "from the materials table).", default="astm_a516_gr70",
              choices=("astm_a36", "astm_a516_gr70", "astm_a537_cl1", "astm_a572_gr50",
                       "en_s275", "en_s355")),
        Field("allowable_stress", "stress", "Your own allowable hoop stress, replacing the "
              "grade's.", optional=True, minimum=1e6, exclusive_minimum=True, maximum=2e9),
        Field("elastic_modulus", "stress", "Your own Young's modulus of the wall, replacing "
              "the grade's.", optional=True, minimum=1e8, maximum=5e11),
        Field("density", "density", "Your own density of the wall material, replacing the "
              "grade's.", optional=True, minimum=500.0, maximum=20000.0),
        Field("joint_efficiency", "fraction", "Longitudinal weld joint efficiency.",
              default=0.9, minimum=PLAUSIBLE_EFFICIENCY, maximum=1.0),
        Field("corrosion_allowance", "length", "Added to the hoop thickness.",
              default="1.5 mm", minimum=0.0, maximum=0.02),
        Field("plates", "length_list", "Available plate thicknesses; default 6 to 50 mm.",
              default=[], maximum=0.5, max_items=200),
        Field("handling_rule", "choice", "Minimum thickness for handling: usbr (D+0.508 m)/400 "
              "or pge D/288.", default="usbr", choices=("usbr", "pge")),
        Field("buckling_safety", "dimensionless", "Safety factor on the critical buckling "
              "pressure under full vacuum.", default=1.5, minimum=1.0, maximum=5.0),
    ), required=False),
    Section("costs", "Pipe costs for the diameter study, in the economics currency. The "
            "defaults are illustrative only: give the project's own prices.", (
        Field("steel_price", "price_per_mass", "Delivered steel plate price.",
              default="1600 /t", minimum=0.0),
        Field("fabrication_factor", "fraction", "Fabrication as a fraction of the steel "
              "cost.", default="60 %", minimum=0.0, maximum=10.0),
        Field("installation_factor", "fraction", "Installation as a fraction of the steel "
              "cost.", default="80 %", minimum=0.0, maximum=10.0),
        Field("civil_fixed", "price_per_length", "Civil works per metre of route (supports, "
              "anchors, access), part independent of the diameter.", default="150 /m",
              minimum=0.0),
        Field("civil_per_diameter", "price_per_area", "Civil works per metre of route and per "
              "metre of diameter (trench, saddles).", default="400 /m^2", minimum=0.0),
        Field("civil_exponent", "dimensionless", "Exponent on the diameter in the civil "
              "cost.", default=1.0, minimum=0.0, maximum=3.0),
        Field("contingency", "fraction", "Contingency on the pipe capital cost.",
              default="15 %", minimum=0.0, maximum=2.0),
        Field("om_fraction", "fraction", "Yearly operation and maintenance as a fraction of "
              "the capital cost.", default="1 %", minimum=0.0, maximum=0.2),
        Field("plant_cost_per_kw", "dimensionless", "Capital cost of the plant (turbines, "
              "generators, powerhouse) per kW of installed capacity, in the economics "
              "currency, for the design flow x diameter study. The default is illustrative "
              "only.", default=1500.0, minimum=0.0, maximum=1e6),
    ), required=False),
    Section("diameter_study", "Sweep and optimum of a uniform penstock diameter, and the stepped diameters along the route.", (
        Field("minimum", "length", "Smallest diameter of the sweep; default: the diameter "
              "at 6 m/s at the design flow.", optional=True, minimum=0.0,
              exclusive_minimum=True, maximum=20.0),
        Field("maximum", "length", "Largest diameter of the sweep; default: the diameter at "
              "1.5 m/s.", optional=True, minimum=0.0, exclusive_minimum=True, maximum=20.0),
        Field("sizes", "length_list", "Available diameters to snap the optimum to; default "
              "50 mm steps.", default=[], maximum=20.0, max_items=500),
        Field("candidates", "length_list", "Diameters to tabulate in full (with a water-"
              "hammer run each); default: the optimum's neighbours and the case's diameter.",
              default=[], maximum=20.0, max_items=20),
        Field("points", "integer", "Diameters in the sweep.", default=200, minimum=10,
              maximum=2000),
        Field("transition_cost", "dimensionless", "Capital cost of one change of diameter "
              "in a stepped pipe (the reducer, its welds and its share of an anchor), in the "
              "economics currency. The default is illustrative only.", default=20000.0,
              minimum=0.0, maximum=1e9),
        Field("minimum_reach", "length", "Shortest run of one diameter in a stepped pipe.",
              default="100 m", minimum=0.0, maximum=1e5),
        Field("materials", "choice_list", "Pipe materials the study compares, each at its "
              "own best uniform size: welded steel (plates), PE100 (ISO 4427 SDR classes) "
              "and ductile iron (EN 545 pressure classes). Their default prices are "
              "illustrative only.", default=["welded_steel", "hdpe", "ductile_iron"],
              choices=("welded_steel", "hdpe", "ductile_iron")),
        Field("stepped_materials", "choice_list", "Pipe materials the stepped design may use "
              "along the route, reach by reach (each must be among the materials compared); a "
              "change of material is charged as a change of diameter. Default welded steel "
              "only, since the other materials' default prices are illustrative.",
              default=["welded_steel"], choices=("welded_steel", "hdpe", "ductile_iron")),
        Field("pe100_prices", "file", "CSV of PE100 pipe prices: nominal outside diameter "
              "(e.g. 630 mm), class by its rated pressure PN (e.g. 10 bar) and delivered price "
              "per metre; only the sizes and classes it lists are offered. Default: "
              "illustrative prices.", optional=True, columns=PRICE_COLUMNS),
        Field("ductile_iron_prices", "file", "CSV of ductile-iron pipe prices: DN as a length "
              "(e.g. 600 mm), class by its allowable operating pressure PFA (C40: 40 bar) and "
              "delivered price per metre; only the sizes and classes it lists are offered. "
              "Default: illustrative prices.", optional=True, columns=PRICE_COLUMNS),
    ), required=False),
    Section("uncertainty", "Monte Carlo of the energy and cost (run with samples > 0 or "
            "penstock run --samples N). Spreads default to zero; with all zero every sample "
            "equals the deterministic run.", (
        Field("samples", "integer", "Number of samples; 0 runs no Monte Carlo.", default=0,
              minimum=0, maximum=100000),
        Field("seed", "integer", "Seed of the random generator (same seed, same samples).",
              default=1, minimum=0, maximum=2**31 - 1),
        Field("roughness_factor", "fraction", "Spread of the pipes' roughness: σ of its "
              "logarithm (median factor 1).", default="0 %", minimum=0.0, maximum=2.0),
        Field("roughness_growth", "roughness_growth", "Spread (standard deviation) of the "
              "roughness growth rate around the pipes' own; the energy uses the roughness at "
              "half the service life, the pressure margin at its end.",
              default="0 mm/year", minimum=0.0, maximum=0.005),
        Field("efficiency_offset", "fraction", "Spread (standard deviation) of an offset added "
              "to the turbine efficiency at every flow, in efficiency points.",
              default="0 %", minimum=0.0, maximum=0.2),
        Field("flow_scale", "fraction", "Spread (standard deviation) of a factor on the whole "
              "flow record (median 1).", default="0 %", minimum=0.0, maximum=1.0),
        Field("flow_method", "choice", "scale: the factor alone; bootstrap: the factor, and "
              "the complete years of the record resampled with replacement.",
              default="scale", choices=("scale", "bootstrap")),
        Field("energy_price", "fraction", "Spread of the energy price: σ of its logarithm.",
              default="0 %", minimum=0.0, maximum=2.0),
        Field("capital_cost", "fraction", "Spread of the pipe capital cost: σ of its "
              "logarithm.", default="0 %", minimum=0.0, maximum=2.0),
    ), required=False),
    Section("surge", "Water hammer settings: a load rejection from the design flow (and any "
            "listed flow) closes the turbine gates or valve at the end of the penstock.", (
        Field("closure_time", "time", "Effective closure time of the turbine gates, nozzle or "
              "valve on load rejection.", default="10 s", minimum=0.0, exclusive_minimum=True),
        Field("closure_law", "choice", "How the opening falls with time: linear, two_stage "
              "(fast to a knee, then slow), a table of opening against time, or instant "
              "(named on purpose: the closure time is then ignored).",
              default="linear", choices=("linear", "two_stage", "table", "instant")),
        Field("knee_time", "time", "two_stage: time of the knee.", optional=True, minimum=0.0,
              exclusive_minimum=True),
        Field("knee_opening", "fraction", "two_stage: relative opening at the knee.",
              optional=True, minimum=0.0, maximum=1.0),
        Field("closure_table", "file", "table law: CSV of relative opening against time.",
              optional=True, columns=(("time", "time"), ("opening", "fraction"))),
        Field("pipe_modulus", "stress", "Young's modulus of the pipe wall; defaults to the "
              "material's value.", optional=True, minimum=1e8, maximum=5e11),
        Field("poisson_ratio", "dimensionless", "Poisson ratio of the pipe wall, for the "
              "wave speed; defaults to each pipe's material value (0.3 where the material "
              "registry has none).", optional=True, minimum=0.0, maximum=0.5),
        Field("restraint", "choice", "Axial restraint of the pipe, for the wave speed "
              "(Wylie & Streeter's three cases).", default="expansion_joints",
              choices=("expansion_joints", "anchored", "upstream_anchor")),
        Field("air_content", "fraction", "Free air as a volume fraction of the water; lowers "
              "the wave speed.", default="0 %", minimum=0.0, maximum=0.05),
        Field("wave_speed", "velocity", "Pressure wave speed; overrides the computed value "
              "for every segment.", optional=True, minimum=100.0, maximum=1500.0),
        Field("allowable_rise", "fraction", "Largest acceptable transient rise as a fraction "
              "of the static head at the turbine.", default="30 %", minimum=0.0,
              exclusive_minimum=True, maximum=10.0),
        Field("rejection_flows", "flow_list", "Further initial flows to reject, besides the "
              "design flow.", default=[], max_items=10),
        Field("record_at", "length_list", "Chainages where the head history is recorded.",
              default=[]),
        Field("study_closure_times", "time_list", "Closure times of the closure-time study; "
              "default: nine times, geometrically spaced from half a pipe period 2L/a to the "
              "larger of 8 periods and twice the closure time.", default=[], max_items=30),
        Field("reaches", "integer", "Reaches of the method-of-characteristics grid over the "
              "whole penstock (at least one per pipe between local losses); fixes the grid. "
              "Default: doubled from 20 until the largest rise and the deepest drop change "
              "by less than 0.5 %.", optional=True, minimum=1, maximum=20000),
        Field("inertia", "moment_of_inertia", "Rotating inertia (turbine + generator) of one "
              "unit, for the mechanical starting time.", optional=True, minimum=0.0,
              exclusive_minimum=True),
    ), required=False),
)

SECTIONS_BY_NAME: dict[str, Section] = {s.name: s for s in SECTIONS}

#: Name of the TOML file inside a case folder.
CASE_FILE = "site.toml"


def reference_markdown() -> str:
    """The case-file reference as Markdown tables (pasted into the README)."""
    from . import route, units

    def unit_of(f: Field) -> str:
        if f.kind in ("text", "choice", "file", "integer") or f.kind.endswith("_list"):
            return f.kind.replace("_list", " (list)")
        si = units.SI_UNITS.get(f.kind, "")
        return f"{f.kind} [{si}]" if si else "number"

    out = []
    for sec in SECTIONS:
        head = f"[[{sec.name}]]" if sec.array else f"[{sec.name}]"
        req = "" if sec.required else " (optional section)"
        out.append(f"**`{head}`**{req}: {sec.description}\n")
        out.append("| key | kind [SI unit] | default | meaning |")
        out.append("|---|---|---|---|")
        for f in sec.fields:
            default = "required" if f.required else ("—" if f.default is None else
                                                     f"`{f.default}`")
            desc = f.description + (" One of: " + ", ".join(f"`{c}`" for c in f.choices)
                                    if f.choices else "")
            out.append(f"| `{f.name}` | {unit_of(f)} | {default} | {desc} |")
        out.append("")
    from . import fittings

    out.append("**Keys of each loss kind** (besides `kind`, `at`, `label` and `k`):\n")
    out.append("| kind | key | kind [SI unit] | default | meaning |")
    out.append("|---|---|---|---|---|")
    for kind in fittings.LOSS_KINDS:
        params = route.case_parameters(kind)
        if not params:
            out.append(f"| `{kind}` | — | | | |")
        for name, (dim, default, desc) in params.items():
            if default is None:
                shown = "required"
            elif dim == "angle":
                shown = f"`{math.degrees(default):g} deg`"
            elif isinstance(default, float):
                shown = f"`{default:.4g}`"
            else:
                shown = f"`{default}`"
            si = units.SI_UNITS.get(dim, "")
            out.append(f"| `{kind}` | `{name}` | {dim}{f' [{si}]' if si else ''} | {shown} | "
                       f"{desc} |")
    return "\n".join(out)

