"""pulsetherm.network: the thermal RC network model, its exact solvers, thermal impedance,
Foster/Cauer networks, stack-up builder, RF line heating, scenarios, sweeps and sizing."""
# Names are imported on first use (PEP 562 module __getattr__): ``import pulsetherm.network.x``
# or one name no longer loads every module (networkx, scipy.optimize, the builder...).
import importlib as _importlib
import sys as _sys
import types as _types

#: exported name -> (module, name in that module)
_EXPORTS = {
    "AxisymModel": ("axisym", "AxisymModel"), "Comparison": ("axisym", "Comparison"),
    "build_axisym": ("axisym", "build_axisym"), "compare": ("axisym", "compare"),
    "FIDELITY": ("builder", "FIDELITY"), "BuiltModel": ("builder", "BuiltModel"),
    "Grading": ("builder", "Grading"), "build": ("builder", "build"), "Cauer": ("foster", "Cauer"),
    "Foster": ("foster", "Foster"), "FosterError": ("foster", "FosterError"),
    "FosterFit": ("foster", "FosterFit"), "fit_foster": ("foster", "fit_foster"),
    "BuiltLine": ("lines", "BuiltLine"), "LineError": ("lines", "LineError"),
    "LineReport": ("lines", "LineReport"), "PointHeater": ("lines", "PointHeater"),
    "RFLine": ("lines", "RFLine"), "Material": ("materials", "Material"),
    "MaterialError": ("materials", "MaterialError"),
    "MaterialLibrary": ("materials", "MaterialLibrary"),
    "default_library": ("materials", "default_library"),
    "HurayRoughness": ("microstrip", "HurayRoughness"), "Microstrip": ("microstrip", "Microstrip"),
    "MicrostripError": ("microstrip", "MicrostripError"), "ModalSolver": ("modal", "ModalSolver"),
    "NonlinearSolver": ("nonlinear", "NonlinearSolver"),
    "ThermalRunawayError": ("nonlinear", "ThermalRunawayError"),
    "InputSpec": ("model", "InputSpec"), "NetworkError": ("model", "NetworkError"),
    "SteadyResult": ("model", "SteadyResult"), "ThermalNetwork": ("model", "ThermalNetwork"),
    "StackReport": ("report", "StackReport"), "stack_report": ("report", "stack_report"),
    "Response": ("result", "Response"), "Scenario": ("scenario", "Scenario"),
    "ScenarioError": ("scenario", "ScenarioError"), "dumps": ("scenario", "dumps"),
    "load": ("scenario", "load"), "loads": ("scenario", "loads"), "save": ("scenario", "save"),
    "RunResult": ("simulate", "RunResult"), "simulate": ("simulate", "simulate"),
    "thermal_impedance": ("impedance", "thermal_impedance"),
    "build_scenario": ("simulate", "build"), "SizingError": ("sizing", "SizingError"),
    "SizingResult": ("sizing", "SizingResult"), "size": ("sizing", "size"),
    "SparseSolver": ("sparse", "SparseSolver"), "SOLVERS": ("solvers", "SOLVERS"),
    "RawResponse": ("solvers", "RawResponse"), "Solver": ("solvers", "Solver"),
    "SolverError": ("solvers", "SolverError"), "resolve_solver": ("solvers", "resolve_solver"),
    "SpreadingError": ("spreading", "SpreadingError"),
    "SpreadingResult": ("spreading", "SpreadingResult"),
    "calibrate_angle": ("spreading", "calibrate_angle"),
    "circular_depth_profile": ("spreading", "circular_depth_profile"),
    "circular_series": ("spreading", "circular_series"),
    "frustum_resistance": ("spreading", "frustum_resistance"),
    "lee_1995": ("spreading", "lee_1995"),
    "rectangular_series": ("spreading", "rectangular_series"),
    "AreaResistance": ("stackup", "AreaResistance"), "Assembly": ("stackup", "Assembly"),
    "Board": ("stackup", "Board"), "Film": ("stackup", "Film"),
    "FixedBase": ("stackup", "FixedBase"), "Layer": ("stackup", "Layer"),
    "LumpedSink": ("stackup", "LumpedSink"), "Mount": ("stackup", "Mount"),
    "Part": ("stackup", "Part"), "StackupError": ("stackup", "StackupError"),
    "StructureFunction": ("structure", "StructureFunction"),
    "structure_function": ("structure", "structure_function"),
    "SweepResult": ("sweep", "SweepResult"), "plan_sweep": ("sweep", "plan_sweep"),
    "run_sweep": ("sweep", "run_sweep"), "sweep": ("sweep", "sweep"),
    "ThermalSystem": ("system", "ThermalSystem"), "UnitError": ("units", "UnitError"),
    "format_quantity": ("units", "format_quantity"), "parse_quantity": ("units", "parse_quantity"),
    "parse_range": ("units", "parse_range"), "Via": ("vias", "Via"),
    "ViaArray": ("vias", "ViaArray"), "ViaError": ("vias", "ViaError"),
    "PulsedZth": ("zth", "PulsedZth"), "ZthCurve": ("zth", "ZthCurve"),
}


def _resolve(name: str):
    mod, src = _EXPORTS[name]
    value = getattr(_importlib.import_module(f"{__name__}.{mod}"), src)
    if name not in _SHADOWED:
        globals()[name] = value
    return value


def __getattr__(name: str):
    if name in _EXPORTS:
        return _resolve(name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | set(_EXPORTS))


#: exported functions named like their own module (``simulate``, ``sweep``): importing the
#: module would set the package attribute to the module, so these stay class properties
#: that always give the function (as the former eager imports did)
_SHADOWED = frozenset(n for n, (mod, src) in _EXPORTS.items() if n == mod)


class _Package(_types.ModuleType):
    """The package module, with the shadowed names as properties (see ``_SHADOWED``)."""


for _name in _SHADOWED:
    setattr(_Package, _name, property(lambda self, _n=_name: _resolve(_n),
                                      lambda self, value: None))
_sys.modules[__name__].__class__ = _Package

__all__ = [
    "BuiltLine", "Cauer", "Foster", "FosterError", "FosterFit", "HurayRoughness", "LineError",
    "LineReport", "Material", "MaterialError", "MaterialLibrary", "Microstrip",
    "MicrostripError", "NetworkError", "PointHeater", "PulsedZth", "RFLine", "Response",
    "SpreadingError", "SpreadingResult", "StructureFunction", "ThermalNetwork",
    "ThermalSystem", "UnitError", "Via", "ViaArray", "ViaError", "ZthCurve",
    "calibrate_angle", "circular_depth_profile", "circular_series", "default_library", "fit_foster", "format_quantity",
    "frustum_resistance", "lee_1995", "parse_quantity", "parse_range", "rectangular_series",
    "structure_function", "Scenario", "ScenarioError", "dumps", "load", "loads", "save",
    "RunResult", "simulate", "thermal_impedance", "build_scenario", "SizingError",
    "SizingResult", "size", "SweepResult", "plan_sweep", "run_sweep", "sweep",
    "AreaResistance", "Assembly", "Board", "Film", "FixedBase", "Layer", "LumpedSink", "Mount",
    "Part", "StackupError", "FIDELITY", "BuiltModel", "Grading", "build", "AxisymModel",
    "Comparison", "build_axisym", "compare", "StackReport", "stack_report",
    "InputSpec", "ModalSolver", "RawResponse", "SOLVERS", "Solver", "SolverError",
    "SteadyResult", "resolve_solver", "NonlinearSolver", "ThermalRunawayError", "SparseSolver",
]
