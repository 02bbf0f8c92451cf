"""Hess back-solver: species, equations, reaction algebra, networks, key values, combustion.

Lower layer than the bomb and solution chains: it knows nothing of logs or runs.
"""

from calwork.hess.algebra import Combination, combine
from calwork.hess.combustion import (
    CombustionLink,
    CombustionLinks,
    combustion_link,
    combustion_link_many,
    combustion_reaction,
)
from calwork.hess.equations import Equation, parse_equation
from calwork.hess.files import read_network_file
from calwork.hess.key_values import KeyValue, KeyValues, load_key_values
from calwork.hess.kirchhoff import ConstantCp, Nasa7, Piecewise, Shomate
from calwork.hess.network import Network, solve_network
from calwork.hess.network_result import DerivedEnthalpy, NetworkResult
from calwork.hess.reactions import Reaction
from calwork.hess.species import Species, is_reference_state, parse_species

__all__ = [
    "Combination",
    "CombustionLink",
    "CombustionLinks",
    "ConstantCp",
    "DerivedEnthalpy",
    "Equation",
    "KeyValue",
    "KeyValues",
    "Nasa7",
    "Network",
    "NetworkResult",
    "Piecewise",
    "Reaction",
    "Shomate",
    "Species",
    "combine",
    "combustion_link",
    "combustion_link_many",
    "combustion_reaction",
    "is_reference_state",
    "load_key_values",
    "parse_equation",
    "parse_species",
    "read_network_file",
    "solve_network",
]
