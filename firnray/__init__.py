"""firnray: radio rays through polar firn and ice.

The public API (see ``docs/guide.md``)::

    import firnray
    prof = firnray.load_profile("demo-dry-firn")          # or firnray.ExponentialProfile(...)
    rays = firnray.find_rays(prof, source=(0.0, -600.0), receiver=(1500.0, -100.0))
    batch = firnray.find_rays_many(prof, sources, receivers)

Layers (one folder each; a module imports only from its own layer or lower
ones): ``medium`` (index profiles, files) -> ``rays`` (closed-form kernels,
root finding, results) -> ``signal`` (Fresnel, absorption, spreading, budget)
-> ``studies`` (shadow zones, D/R delays, lookup
tables, chunked execution, stations, vertex fits, profile fits, reconstruction
checks) -> ``faces`` (command line, plots).
"""

from firnray.errors import FirnrayWarning, ProfileFileError
from firnray.version import __version__
from firnray.medium.files import bundled_profiles, load_profile
from firnray.medium.attenuation import (ArrheniusAttenuation, CallableAttenuation,
                                        ConstantAttenuation, TabulatedAttenuation)
from firnray.medium.profiles import ExponentialProfile, IndexProfile
from firnray.medium.general_profiles import (FunctionProfile, PiecewiseExponentialProfile,
                                             TabulatedProfile)
from firnray.medium.firn_density import (density_to_index, herron_langway_density,
                                         herron_langway_profile, index_profile_from_density,
                                         kovacs_index, looyenga_index)
from firnray.medium.index_fit import (IndexFit, fit_exponential_index,
                                      fit_piecewise_exponential_index)
from firnray.medium.smoothing import smooth_samples
from firnray.medium.reflectors import Reflector
from firnray.medium.temperature import (LinearTemperature, RobinTemperature,
                                        TabulatedTemperature)
from firnray.rays.results import KIND_CODES, KIND_NAMES, Ray, RaySet
from firnray.rays.solve import find_rays, find_rays_many
from firnray.signal.budget import SignalBudget, signal_budget, signal_budget_many
from firnray.signal.fresnel import FresnelCoefficients, fresnel
from firnray.studies.delays import DelayGrid, DelayInversion, distance_from_delay, dr_delays
from firnray.studies.profile_fit import PulserDelays, ProfileFit, fit_profile_to_delays
from firnray.studies.reconstruction import (ReconstructionReport, VertexSample, read_vertex_csv,
                                            validate_reconstruction)
from firnray.studies.shadow import (IlluminationMap, illumination_map, reachability_map,
                                    shadow_boundary)
from firnray.studies.station import Station, load_station
from firnray.studies.vertex import (ArrivalPrediction, VertexFit, fit_vertex, predict_arrivals,
                                    simulate_arrivals)
from firnray.studies.tables import LookupTable, TableError, build_table, open_table


__all__ = [
    "ArrheniusAttenuation",
    "CallableAttenuation",
    "ConstantAttenuation",
    "FresnelCoefficients",
    "LinearTemperature",
    "Reflector",
    "RobinTemperature",
    "SignalBudget",
    "TabulatedAttenuation",
    "TabulatedTemperature",
    "fresnel",
    "signal_budget",
    "signal_budget_many",
    "ArrivalPrediction",
    "ProfileFit",
    "PulserDelays",
    "ReconstructionReport",
    "Station",
    "VertexFit",
    "VertexSample",
    "fit_profile_to_delays",
    "fit_vertex",
    "load_station",
    "predict_arrivals",
    "read_vertex_csv",
    "simulate_arrivals",
    "validate_reconstruction",
    "DelayGrid",
    "DelayInversion",
    "ExponentialProfile",
    "FunctionProfile",
    "IndexFit",
    "PiecewiseExponentialProfile",
    "TabulatedProfile",
    "density_to_index",
    "fit_exponential_index",
    "fit_piecewise_exponential_index",
    "herron_langway_density",
    "herron_langway_profile",
    "index_profile_from_density",
    "kovacs_index",
    "looyenga_index",
    "smooth_samples",
    "FirnrayWarning",
    "IndexProfile",
    "KIND_CODES",
    "KIND_NAMES",
    "LookupTable",
    "ProfileFileError",
    "Ray",
    "RaySet",
    "TableError",
    "__version__",
    "build_table",
    "bundled_profiles",
    "distance_from_delay",
    "dr_delays",
    "find_rays",
    "find_rays_many",
    "load_profile",
    "open_table",
    "reachability_map",
    "shadow_boundary",
    "IlluminationMap",
    "illumination_map",
]
