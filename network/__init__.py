"""pulsetherm.network: the thermal RC network model, its exact solvers, thermal impedance,
Foster/Cauer networks, stack-up builder, RF line heating, scenarios, sweeps and sizing."""
from .axisym import AxisymModel, Comparison, build_axisym, compare
from .builder import FIDELITY, BuiltModel, Grading, build
from .foster import Cauer, Foster, FosterError, FosterFit, fit_foster
from .lines import BuiltLine, LineError, LineReport, PointHeater, RFLine
from .materials import Material, MaterialError, MaterialLibrary, default_library
from .microstrip import HurayRoughness, Microstrip, MicrostripError
from .modal import ModalSolver
from .nonlinear import NonlinearSolver, ThermalRunawayError
from .model import InputSpec, NetworkError, SteadyResult, ThermalNetwork
from .report import StackReport, stack_report
from .result import Response
from .scenario import Scenario, ScenarioError, dumps, load, loads, save
from .simulate import RunResult, simulate, thermal_impedance
from .simulate import build as build_scenario
from .sizing import SizingError, SizingResult, size
from .sparse import SparseSolver
from .solvers import SOLVERS, RawResponse, Solver, SolverError, resolve_solver
from .spreading import (SpreadingError, SpreadingResult, calibrate_angle, circular_depth_profile,
                        circular_series,
                        frustum_resistance, lee_1995, rectangular_series)
from .stackup import (AreaResistance, Assembly, Board, Film, FixedBase, Layer, LumpedSink,
                      Mount, Part, StackupError)
from .structure import StructureFunction, structure_function
from .sweep import SweepResult, plan_sweep, run_sweep, sweep
from .system import ThermalSystem
from .units import UnitError, format_quantity, parse_quantity, parse_range
from .vias import Via, ViaArray, ViaError
from .zth import PulsedZth, ZthCurve

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
