"""Recurring-screening configuration (TOML): schema, loader with line numbers, starter file."""

from .schema import (Config, CovarianceConfig, FleetMember, OutputsConfig, load_config,
                     config_from_options)
from .starter import STARTER, write_starter

__all__ = ["Config", "CovarianceConfig", "FleetMember", "OutputsConfig", "load_config",
           "config_from_options", "STARTER", "write_starter"]
