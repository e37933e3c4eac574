"""Routes from coordinates (contract section 11): x_m, y_m CSV, GPX, GeoJSON, elevation
models, survey clean-up. Geometry by the field's libraries: pyproj, gpxpy, rasterio."""

from optimiser.io.geometry.plan import to_lon_lat
from optimiser.io.geometry.profile import load_coordinate_profile, profile_kind

__all__ = ["load_coordinate_profile", "profile_kind", "to_lon_lat"]
