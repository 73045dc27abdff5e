"""Risk: collision probability in the encounter plane, CDM exchange."""

from .assess import assess, assess_cdm
from .cdm import Cdm, read_cdm, write_cdm
from .encounter_plane import plane_basis, project
from .pc import (cumulative, in_dilution_region, pc_chan, pc_isotropic_exact, pc_max_isotropic,
                 pc_max_line, pc_max_scaled, pc_monte_carlo, pc_quadrature)

__all__ = ["assess", "assess_cdm", "Cdm", "read_cdm", "write_cdm", "plane_basis", "project",
           "cumulative", "in_dilution_region", "pc_chan", "pc_isotropic_exact", "pc_max_isotropic",
           "pc_max_line", "pc_max_scaled", "pc_monte_carlo", "pc_quadrature"]
