"""A single station seen from above: the extent of its antennas and its keep-out areas on a grid.

The keep-out areas are the site grid kernel (:func:`rfsafe.site.grid.ratio_grid`) applied to the
configurations of one station: far-field estimate with the gain each antenna uses toward places
(its pattern where it opts in with ``use_pattern``, else its peak gain in every direction), each
transmitter its worst configuration at each point, all transmitters summed. Orchestration only:
the physics is the kernel's and the power chain is :mod:`rfsafe.assess`'s.
"""

from __future__ import annotations

import numpy as np

from rfsafe.assess import antenna_outline

__all__ = ["antenna_outline", "station_plan", "PLAN_LEVELS", "PLAN_POINTS"]

#: Evaluation heights of the two plan levels [m]: the ground itself, and a standing person's body
#: (worst of 0.5 to 2 m, the heights of the near-field maps), which holds head height.
PLAN_LEVELS = {"ground": (0.0,), "head": (0.5, 1.0, 1.5, 2.0)}
#: Grid points along the longer side of the plan.
PLAN_POINTS = 161


def _extent(loaded, configs, outlines):
    """Plan extent [m]: antennas (their pieces), places, and the compliance reach around each antenna."""
    st = loaded.model
    xs = [p.x_m for p in st.places]
    ys = [p.y_m for p in st.places]
    reach = {}
    for c in configs:
        d = max((cd.dist_m for cd in c.compliance_distances), default=0.0)
        reach[c.antenna] = max(reach.get(c.antenna, 0.0), d)
    for ant in st.antennas:
        segs, _, _ = outlines[ant.id]
        pts = [(ant.x_m, ant.y_m)] + [(p[0], p[1]) for s in segs for p in s]
        r = min(reach.get(ant.id, 0.0), 60.0) * 1.1
        for x, y in pts:
            xs += [x - r, x + r]
            ys += [y - r, y + r]
    lo_x, hi_x, lo_y, hi_y = min(xs), max(xs), min(ys), max(ys)
    pad = max(2.0, 0.08 * max(hi_x - lo_x, hi_y - lo_y))
    return lo_x - pad, hi_x + pad, lo_y - pad, hi_y + pad


def station_plan(loaded, emitters, configs, outlines):
    """Keep-out grid of one station at ground level and at a standing person's heights.

    Parameters
    ----------
    loaded : LoadedStation
    emitters : sequence of rfsafe.assess.Emitter
        The station's configurations reduced to their power chain.
    configs : sequence of ConfigurationResult
        The same configurations' results (for the compliance reach that sizes the plan).
    outlines : dict
        Antenna id -> :func:`antenna_outline` result.

    Returns
    -------
    rfsafe.results.PlanMap
    """
    from rfsafe.antenna.extent import shifted
    from rfsafe.results import PlanMap
    from rfsafe.site.constants import ENVIRONMENTS
    from rfsafe.site.grid import SiteEmitter, limit_equivalent_w_m2, ratio_grid, site_pattern

    site_ems = []
    for em in emitters:
        k = next(j for j, a in enumerate(loaded.model.antennas) if a.id == em.antenna.id)
        pat, _ = site_pattern(em.antenna, em.peak_gain_dbi, loaded.pattern_tables, f"antennas[{k}]")
        cfg = next(c for c in configs if c.id == em.configuration)
        site_ems.append(SiteEmitter(
            transmitter=em.transmitter, configuration=em.configuration, x_m=em.x_m, y_m=em.y_m,
            height_m=em.height_m, pattern=pat, freq_hz=em.freq_hz,
            power_w=tuple(em.avg_power_at_antenna_w[e] for e in ENVIRONMENTS),
            limit_w_m2=tuple(limit_equivalent_w_m2(em.limits[e], em.avg_power_at_antenna_w[e], em.pep_at_antenna_w)
                             for e in ENVIRONMENTS),
            ground_factor=em.ground_factor, azimuth_deg=em.antenna.azimuth_deg, tilt_deg=em.antenna.tilt_deg,
            polarisation=em.antenna.polarisation,
            near_field_m=max(cfg.near_field_distance_m, cfg.aperture_far_field_m or 0.0),
            # measured from the nearest part of the antenna, as the station's places are (the kernel takes
            # the structure relative to the declared position)
            extent=None if em.extent is None else shifted(em.extent, (-em.x_m, -em.y_m, -em.height_m))))
    x0, x1, y0, y1 = _extent(loaded, configs, outlines)
    step = max(x1 - x0, y1 - y0) / (PLAN_POINTS - 1)
    x = np.arange(x0, x1 + step / 2, step)
    y = np.arange(y0, y1 + step / 2, step)
    gx, gy = np.meshgrid(x, y)
    # the largest ratio also from the site review's fine samples next to each antenna and along each beam's
    # bearing (rfsafe.site.analysis._local_points): a keep-out zone smaller than a plan cell is not drawn, but
    # the legend does not say "no keep-out" for it
    from rfsafe.site.analysis import _local_points
    from rfsafe.site.grid import _groups

    lx, ly = _local_points(_groups(site_ems)[1], step, (float(x[0]), float(x[-1]), float(y[0]), float(y[-1])))
    ratio, top = {}, {}
    for level, heights in PLAN_LEVELS.items():
        grid = ratio_grid(site_ems, gx.ravel(), gy.ravel(), heights)
        fine = ratio_grid(site_ems, lx, ly, heights)
        for i, env in enumerate(ENVIRONMENTS):
            r = np.asarray(grid.ratio[i], dtype=float).reshape(gx.shape)
            ratio[(level, env)] = r
            both = np.concatenate([r.ravel(), np.asarray(fine.ratio[i], dtype=float)])
            finite = both[np.isfinite(both)]
            top[f"{level} {env}"] = float(finite.max()) if finite.size else float("inf")
    method = ("far-field estimate S = P G F / (4 pi R^2) on a grid, gain toward each point as used for places "
              "(pattern where the antenna opts in, else peak gain in every direction); every transmitter its "
              "worst configuration, all transmitters summed (conservative; simultaneous groups not applied)")
    return PlanMap(x_m=tuple(float(v) for v in x), y_m=tuple(float(v) for v in y),
                   heights_m={k: tuple(v) for k, v in PLAN_LEVELS.items()}, max_ratio=top, method=method,
                   ratio=ratio)
