"""Checks that a Profile encloses one simple fluid region; each error names the segment."""

from __future__ import annotations

import numpy as np

from .profile import Profile, ProfileError, Segment


def _check_pieces(profile: Profile, tol: float) -> None:
    """The checks of each piece on its own, whatever closes the outline: a proper segment, no repeated
    points, nowhere below the axis."""
    chains = list(profile.chains.items())
    for _, chain in chains:
        for seg in chain:
            _check_segment(seg, tol)
    for _, chain in chains:
        _check_repeats(chain, tol)
    for _, chain in chains:
        for seg in chain:
            p = seg.sample()
            if p[:, 1].min() < -tol:
                i = int(np.argmin(p[:, 1]))
                raise ProfileError(seg.key, f"goes below the axis (r = {p[i, 1]:.6g} m at x = {p[i, 0]:.6g} m); r must be >= 0")


def validate(profile: Profile) -> Profile:
    """Raise ProfileError naming the offending segment; return the profile when it is valid."""
    scale = profile.length_scale
    tol = 1e-9 * scale
    _check_pieces(profile, tol)

    if not profile.x_outlet > profile.x_inlet + tol:
        raise ProfileError(profile.wall[-1].key, f"the wall must end downstream of where it starts (x_out = {profile.x_outlet:.6g} m <= x_in = {profile.x_inlet:.6g} m)")
    if profile.r_inlet <= tol:
        raise ProfileError(profile.wall[0].key, "the wall must start away from the axis (inlet radius > 0)")
    if profile.r_outlet <= tol:
        raise ProfileError(profile.wall[-1].key, "the wall must end away from the axis (outlet radius > 0)")

    if profile.centerbody:
        _check_centerbody(profile, tol)
    _check_simple(profile, tol)
    if profile.area <= 0:
        raise ProfileError("bore", "the outline encloses no fluid region (it is inside out)")
    return profile


def validate_free_jet(profile: Profile) -> Profile:
    """A profile whose wall ends at a lip from which a free jet leaves: checked with the first trial
    jet in place (the outlet plane is where that jet ends; a centre body may reach past the lip)."""
    from .jet import first_trial, jet_problem

    last = profile.wall[-1]
    _check_pieces(profile, 1e-9 * profile.length_scale)  # before a trial jet is sized by the channel height
    if last.end[1] <= 1e-9 * profile.length_scale:
        raise ProfileError(last.key, "a free jet leaves from the lip where the wall ends: the wall must end away from the axis")
    if not profile.min_channel_height > 0.0:
        raise ProfileError(last.key, "the wall touches the axis (or the centre body): no channel for the flow")
    trial = first_trial(profile, 0.05 * profile.min_channel_height)
    problem = jet_problem(profile, trial.chain_points("jet"))
    if problem:
        raise ProfileError(last.key, f"a free jet cannot leave the lip at its end ({problem} at the first trial shape)")
    validate(trial)
    return profile


def _check_segment(seg: Segment, tol: float) -> None:
    if seg.chord <= tol:
        raise ProfileError(seg.key, f"zero length: it ends where it starts ({seg.start[0]:.6g}, {seg.start[1]:.6g}) m")
    if seg.kind == "arc":
        if abs(seg.radius) < 0.5 * seg.chord * (1 - 1e-9):
            raise ProfileError(
                seg.key, f"arc radius {abs(seg.radius):.6g} m is less than half the chord ({0.5 * seg.chord:.6g} m): no such arc"
            )
    if seg.kind == "spline":
        pts = np.array([seg.start, *seg.via, seg.end])
        if np.any(np.linalg.norm(np.diff(pts, axis=0), axis=1) <= tol):
            raise ProfileError(seg.key, "two consecutive points are the same")


def _check_repeats(chain, tol: float) -> None:
    seen: dict[tuple, str] = {}
    for i, seg in enumerate(chain):
        key = tuple(sorted([tuple(np.round(np.array(seg.start) / tol)), tuple(np.round(np.array(seg.end) / tol))]))
        if seg.kind == "line" and key in seen:
            raise ProfileError(seg.key, f"repeats {seen[key]}")
        seen[key] = seg.key
        if i > 0:
            prev = chain[i - 1]
            t0, t1 = prev.tangent_at("end"), seg.tangent_at("start")
            if float(t0 @ t1) < -1 + 1e-9:
                raise ProfileError(seg.key, f"doubles back along {prev.key}")


def _check_centerbody(profile: Profile, tol: float) -> None:
    cb = profile.centerbody
    xi, xo = profile.x_inlet, profile.x_outlet
    for seg, which in ((cb[0], "start"), (cb[-1], "end")):
        x, r = seg.start if which == "start" else seg.end
        on_axis = abs(r) <= tol and xi - tol <= x <= xo + tol
        on_plane = (abs(x - xi) <= tol or abs(x - xo) <= tol) and r >= 0
        if not (on_axis or on_plane):
            raise ProfileError(
                seg.key, f"the centre body must {which} on the axis (r = 0) or on the inlet or outlet plane, got ({x:.6g}, {r:.6g}) m"
            )
    a, b = cb[0].start, cb[-1].end
    if abs(a[0] - b[0]) <= tol and (abs(a[0] - xi) <= tol or abs(a[0] - xo) <= tol) and a[1] > tol and b[1] > tol:
        raise ProfileError(cb[0].key, "the centre body starts and ends on the same plane")
    gap = profile.min_channel_height
    if gap <= 1e-6 * profile.length_scale:
        raise ProfileError(cb[0].key, "the centre body touches the wall: it needs a gap all along")


def _check_simple(profile: Profile, tol: float) -> None:
    """No two non-adjacent pieces of the closed outline touch or cross.

    Candidate pairs come from an R-tree of the sampled pieces (shapely STRtree, O(n log n));
    only those are tested exactly, vectorised.
    """
    import shapely

    pts, keys = [], []
    for _, seg in profile.loop():
        p = seg.sample()[:-1]
        pts.append(p)
        keys += [seg.key] * len(p)
    p = np.vstack(pts)
    n = len(p)
    a, b = p, np.roll(p, -1, axis=0)
    lines = shapely.linestrings(np.stack([a, b], axis=1))
    tree = shapely.STRtree(lines)
    ii, jj = tree.query(lines, predicate="dwithin", distance=tol)
    pair = (jj >= ii + 2) & ~((ii == 0) & (jj == n - 1))
    ii, jj = ii[pair], jj[pair]
    if ii.size == 0:
        return
    hit = _segments_touch(a[ii], b[ii], a[jj], b[jj], tol)
    if not np.any(hit):
        return
    k = int(np.flatnonzero(hit)[np.argmin(ii[hit])])  # the first crossing along the outline
    ki, kj = keys[ii[k]], keys[jj[k]]
    where = a[ii[k]]
    if ki == kj:
        raise ProfileError(ki, f"crosses itself near ({where[0]:.6g}, {where[1]:.6g}) m")
    first, second = (ki, kj) if not ki.endswith("plane") and ki != "axis" else (kj, ki)
    raise ProfileError(first, f"crosses or touches {second} near ({where[0]:.6g}, {where[1]:.6g}) m: the outline must be simple")


def _segments_touch(p1, p2, q1, q2, tol):
    """Vectorised test: closed segments p1p2 and q1q2 intersect (or come within tol)."""

    def orient(a, b, c):
        return (b[:, 0] - a[:, 0]) * (c[:, 1] - a[:, 1]) - (b[:, 1] - a[:, 1]) * (c[:, 0] - a[:, 0])

    d1, d2 = orient(q1, q2, p1), orient(q1, q2, p2)
    d3, d4 = orient(p1, p2, q1), orient(p1, p2, q2)
    scale = tol * (np.linalg.norm(p2 - p1, axis=1) + np.linalg.norm(q2 - q1, axis=1))
    proper = (((d1 > scale) & (d2 < -scale)) | ((d1 < -scale) & (d2 > scale))) & (
        ((d3 > scale) & (d4 < -scale)) | ((d3 < -scale) & (d4 > scale))
    )

    def near(a, s0, s1):  # point a within tol of segment s0s1
        d = s1 - s0
        dd = np.maximum((d * d).sum(1), 1e-300)
        t = np.clip(((a - s0) * d).sum(1) / dd, 0, 1)
        return np.linalg.norm(a - (s0 + t[:, None] * d), axis=1) <= tol

    touch = near(p1, q1, q2) | near(p2, q1, q2) | near(q1, p1, p2) | near(q2, p1, p2)
    return proper | touch
