"""Bore profiles: templates, segments, CSV points, validation."""

from .profile import Corner, Profile, ProfileError, Segment
from .templates import build_profile
from .validate import validate

__all__ = ["Corner", "Profile", "ProfileError", "Segment", "build_profile", "validate"]
