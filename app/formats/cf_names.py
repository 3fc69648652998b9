"""The CF standard_names shoalcast writes (frozen; from the CF standard-name table via
docs/formats.md §2.1, plus the CF coordinate names time/latitude/longitude/forecast_reference_time).

A test asserts every standard_name in a file we write is in this set: add a name here only after
checking it in the CF table.
"""

WRITTEN_STANDARD_NAMES = frozenset({
    "time",
    "latitude",
    "longitude",
    "forecast_reference_time",
    "sea_surface_wave_frequency",
    "sea_surface_wave_from_direction",
    "sea_surface_wave_variance_spectral_density",
    "sea_surface_wave_directional_variance_spectral_density",
    "sea_surface_wave_significant_height",
    "sea_surface_wave_mean_from_direction",
    "sea_surface_wave_principal_from_direction",
})
