"""The values on a settled free jet's boundary: pressure (ambient on a free streamline) and the
speed's mismatch with the Bernoulli jet speed, face by face from the lip (jet.csv)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..geometry import Profile
from ..names import Boundary
from ..outlets.freejet import jet_speed
from ..solvers.base import FlowResult
from ..solvers.walls import wall_table


@dataclass(frozen=True, eq=False)
class JetTable:
    x: np.ndarray
    r: np.ndarray
    s: np.ndarray  # arc length from the lip [m]
    pressure: np.ndarray  # gauge [Pa]: 0 on a free streamline
    speed: np.ndarray
    speed_mismatch: np.ndarray  # speed / jet speed - 1
    nx: np.ndarray
    nr: np.ndarray
    length: np.ndarray
    lip_faces: int = 1  # the faces next to the lip, inside its singular flow: reported apart

    def columns(self) -> dict[str, np.ndarray]:
        return {"x_m": self.x, "r_m": self.r, "s_m": self.s, "p_gauge_Pa": self.pressure, "speed_m_s": self.speed,
                "speed_mismatch": self.speed_mismatch, "n_x": self.nx, "n_r": self.nr, "face_length_m": self.length}

    def mismatch(self, skip_lip: int | None = None) -> tuple[float, float]:
        """Largest and length-weighted rms |speed mismatch| beyond the first ``skip_lip`` faces (default
        ``lip_faces``: the flow round a sharp edge is singular there)."""
        skip = self.lip_faces if skip_lip is None else skip_lip
        m, w = self.speed_mismatch[skip:], self.length[skip:]
        if not m.size:
            return float("nan"), float("nan")
        return float(np.max(np.abs(m))), float(np.sqrt(np.sum(w * m * m) / np.sum(w)))


def jet_table(flow: FlowResult, profile: Profile, lip_faces: int = 1) -> JetTable:
    t = wall_table(flow, profile, Boundary.JET)
    V = jet_speed(flow)
    mismatch = t.speed / V - 1.0 if V > 0 else np.full(t.speed.shape, np.nan)
    return JetTable(t.x, t.r, t.s, t.pressure, t.speed, mismatch, t.nx, t.nr, t.length, lip_faces)
