"""pulsetherm.network: the thermal RC network model, its exact solvers, thermal impedance,
Foster/Cauer networks, stack-up builder, RF line heating, scenarios, sweeps and sizing."""
from .foster import Cauer, Foster, FosterError, FosterFit, fit_foster
from .lines import BuiltLine, LineError, LineReport, PointHeater, RFLine
from .microstrip import HurayRoughness, Microstrip, MicrostripError
from .model import NetworkError, ThermalNetwork
from .result import Response
from .structure import StructureFunction, structure_function
from .system import ThermalSystem
from .zth import PulsedZth, ZthCurve

__all__ = [
    "BuiltLine", "Cauer", "Foster", "FosterError", "FosterFit", "HurayRoughness", "LineError",
    "LineReport", "Microstrip", "MicrostripError", "NetworkError", "PointHeater", "RFLine", "PulsedZth", "Response",
    "StructureFunction", "ThermalNetwork", "ThermalSystem", "ZthCurve", "fit_foster",
    "structure_function",
]
