"""The figures' public names in one place (docs/figures.md); each lives in the module of its kind.

- :mod:`.figure_common`: the journal style, sizes and palette, writing SVG/PNG/PDF, inline SVG;
- :mod:`.profile_data`: energy profiles as data (:class:`ProfileData`), overlay groups, file stems;
- :mod:`.profile_labels`: the collision-free placement of a diagram's labels;
- :mod:`.profile_figures`: drawing energy profile diagrams;
- :mod:`.temperature_figures`: ΔG(T) and Arrhenius plots;
- :mod:`.run_figures`: every figure of a run, and writing them.
"""

from __future__ import annotations

from .figure_common import (
    COLUMN_WIDTH_IN,
    FORMATS,
    PALETTE,
    STYLE,
    UNIT_LABELS,
    figure_svg,
    power_of_ten,
    save_figure,
)
from .profile_data import (
    ProfileData,
    ProfileState,
    overlay_groups,
    profile_stems,
    profile_temperature_index,
    profiles_from_records,
    run_profiles,
)
from .profile_figures import axis_label, format_value, overview_figure, plot_profile_panels, plot_profiles, state_name
from .run_figures import run_figures, write_profile_figures

__all__ = [
    "COLUMN_WIDTH_IN", "FORMATS", "PALETTE", "STYLE", "UNIT_LABELS", "ProfileData", "ProfileState", "axis_label",
    "figure_svg", "format_value", "overlay_groups", "overview_figure", "plot_profile_panels", "plot_profiles",
    "power_of_ten", "profile_stems", "profile_temperature_index", "profiles_from_records", "run_figures",
    "run_profiles", "save_figure", "state_name", "write_profile_figures",
]
