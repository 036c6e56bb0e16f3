"""Figure sections of a design report: polytopes, ellipses, ratio trade and efficiency sensitivity.

Each function computes its numbers (:mod:`.geometry`, :mod:`.sweeps`), draws them
(:mod:`.capability_figures`, :mod:`.sweep_figures`), writes the PNG and SVG files into the
figures folder and returns a :class:`~.markup.Section` with the figure embedded and a reading
guide.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from . import capability_figures, figures, sweep_figures
from .geometry import ellipse_sections, plane_label, polytope_sections
from .markup import Cell, Section, figure, fmt, number, paragraph, pct, table
from .sweeps import efficiency_sensitivity, impact_metric, ratio_sweep
from .wording import pose_text

MODE_WORDS = {
    "frictionless": "frictionless",
    "motoring": "motoring",
    "backdriven": "back-driven",
    "locked": "all joints locked",
}

POLYTOPE_GUIDE = (
    "Each outline is the set of tip forces the joints can exert at once at this pose, gravity of "
    "the robot included, when every joint has the capacity of one transmission mode: "
    "frictionless (N·τ_peak), all motoring (η_f·N·τ_peak) or all back-driven holding "
    "(N·τ_peak/η_b). A real motion mixes modes joint by joint; the dots are the payloads of the "
    "cases at this pose, computed with their own modes. The plot is the section of the 3-D "
    "polytope by the plane of two world axes through zero force (not a projection)."
)
NO_POLYTOPE = (
    "No single-contact payload case: nothing to draw. Stance cases (the body carried on several "
    "feet with friction cones) are solved as a cone program; their numbers are under Every case."
)
ELLIPSE_GUIDE = (
    "The inertia felt at the contact: the distance from the centre to a curve along a direction "
    "is the square root of the effective mass along it, so a larger curve means a harder hit. "
    "Back-driven is what an impact feels (the link drives the motors through N²·I_r/η_b; "
    "self-locking joints count as locked). For a floating base the dotted curve is the inertia "
    "with every joint locked; the impact mitigation factor measures how far the back-driven "
    "curve stays inside it."
)
RATIO_GUIDE = (
    "One joint's total ratio is scaled from ¼ to 4 times the design value while every other "
    "joint keeps its design (joints that share one actuator are scaled together, one curve "
    "labelled by the first of them); each curve is re-evaluated with the same physics as the "
    "assessment. A higher ratio raises a joint's drive torque until the gear rating caps it, and "
    "raises its reflected inertia N²·I_r, which lowers the impact mitigation factor (or raises "
    "the back-driven effective mass for a fixed base)."
)
RATIO_CAPTION = (
    "Payload and impact metrics against each joint's ratio (others held). The dashed vertical "
    "line is the design; dotted horizontal lines are requirements. Stage masses, inertias, "
    "ratings and efficiencies are held at the design values."
)
SENSITIVITY_GUIDE = (
    "Catalog efficiencies are assumptions. Each joint's forward (η_f) and backward (η_b) "
    "efficiency is moved by ±{pts} percentage points in turn (η_f kept in [0.01, 1], η_b at "
    "most 1; η_b ≤ 0 makes the joint self-locking) and the design re-evaluated. Forward "
    "efficiency moves the drive torque; backward efficiency moves the holding torque and the "
    "back-driven inertia that impacts feel."
)


def panel_title(short: str, case: str) -> str:
    """E.g. "Back-driven IMF, touchdown"."""
    return f"Back-driven {short}, {case}"


def _polytope_caption(s) -> str:
    cap = (
        f"Force polytope sections in the {plane_label(s.plane)} plane through F = 0 at the "
        f"pose of {', '.join(s.cases)}; forces in N."
    )
    unbounded = [MODE_WORDS[m] for m, c in s.clipped.items() if c]
    if unbounded:
        cap += (
            f" Unbounded in {', '.join(unbounded)} mode (a self-locking joint or a direction "
            "no joint limits): drawn clipped."
        )
    if _coincide(s.vertices):
        cap += (
            " The outlines coincide: every bounding joint sits at its gear torque limit "
            "(peak), which caps all three modes alike."
        )
    return cap


def polytope_section(evaluator, arrays, a: dict, fig_dir: Path) -> Section:
    """Force-polytope sections per payload pose, three modes overlaid."""
    payload = {
        c["name"]: float(c["metrics"]["payload"])
        for c in a["cases"]
        if c["kind"] == "payload" and isinstance(c["metrics"].get("payload"), (int, float))
    }
    parts = [paragraph(POLYTOPE_GUIDE)]
    drawn = polytope_sections(evaluator, arrays, payload)
    if not drawn:
        parts.append(paragraph(NO_POLYTOPE))
    for k, s in enumerate(drawn):
        name = f"polytope-{k + 1}"
        png = figures.save(capability_figures.polytope_figure(s), fig_dir, name)
        parts.append(figure(png, name, s.title, _polytope_caption(s)))
    return Section("polytopes", "Force capability polytopes", "".join(parts))


def _coincide(vertices: dict) -> bool:
    """True when the three modes' polytopes have the same vertices (to 1e-9 relative)."""
    shapes = [np.round(np.asarray(v), 9) for v in vertices.values()]
    if any(v.shape != shapes[0].shape for v in shapes) or shapes[0].size == 0:
        return False
    ref = sorted(map(tuple, shapes[0]))
    tol = 1e-9 * (float(np.abs(shapes[0]).max()) or 1.0)
    return all(np.allclose(sorted(map(tuple, v)), ref, rtol=0, atol=tol) for v in shapes[1:])


def ellipse_section(evaluator, arrays, fig_dir: Path) -> Section:
    """Inertia-ellipse sections per impact case, per mode (and locked joints)."""
    parts = [paragraph(ELLIPSE_GUIDE)]
    locked = [j for j, x in zip(evaluator.robot.actuated, arrays.self_locking[0], strict=True) if x]
    for k, s in enumerate(ellipse_sections(evaluator, arrays)):
        name = f"inertia-{k + 1}"
        png = figures.save(capability_figures.ellipse_figure(s), fig_dir, name)
        masses = "; ".join(f"{MODE_WORDS[m]} {fmt(v, 'kg')}" for m, v in s.mass_along.items())
        cap = (
            f"Inertia ellipse sections in the {plane_label(s.plane)} plane through the contact "
            f"point, case {s.case}; axes in √kg. Effective mass along the case direction: "
            f"{masses}."
        )
        if locked:
            cap += f" Self-locking, hence locked in the back-driven curve: {', '.join(locked)}."
        parts.append(figure(png, name, s.title, cap))
    return Section("ellipses", "Inertia ellipses", "".join(parts))


def ratio_section(project, evaluator, arrays, fig_dir: Path) -> Section:
    """The payload mass every case carries and the impact metrics against each joint's ratio."""
    sweep = ratio_sweep(project, evaluator, arrays)
    panels = []
    if "payload" in sweep.values:
        panels.append(("payload", "Payload mass", "payload mass every case carries (kg)", None))
    for case, (key, short, unit) in impact_metric(project, evaluator).items():
        limit = project.case(case).limits.get("imf_min" if key == "imf" else "effective_mass_max")
        ylabel = f"back-driven {short} ({unit or 'dimensionless'})"
        panels.append((case, panel_title(short, case), ylabel, limit))
    if not panels:
        body = paragraph("The project has no payload or impact case.")
        return Section("ratio", "Gear ratio trade", body)
    png = figures.save(sweep_figures.ratio_figure(sweep, panels), fig_dir, "ratio-trade")
    body = paragraph(RATIO_GUIDE) + figure(
        png, "ratio-trade", "metrics against gear ratio per joint", RATIO_CAPTION
    )
    return Section("ratio", "Gear ratio trade", body)


def _sensitivity_table(sens, columns, titles, units, gearless=frozenset()) -> str:
    """The sensitivity table; ``gearless``: joints without a gear (direct drives), which have
    no efficiency to move and get one row saying so."""
    pts = round(100 * sens.step)
    rows = []
    for j, joint in enumerate(sens.joints):
        if joint in gearless:
            rows.append([joint, "—"] + ["" for _k in columns] + ["no gear: nothing to vary"])
            continue
        for f, fname in enumerate(("η_f", "η_b")):
            row = [joint, fname]
            for k in columns:
                low, high = sens.values[k][j, f]
                if k == "payload" and min(low, high) <= 0:
                    # below every case's fixed load: no payload, not a negative mass
                    low_t = "none" if low <= 0 else number(low)
                    high_t = "none" if high <= 0 else fmt(high, units[k])
                    row.append(Cell(f"{low_t} / {high_t}", "num"))
                    continue
                row.append(Cell(f"{number(low)} / {fmt(high, units[k])}", "num"))
            # a move past the efficiency's range stops at its end (sweeps.efficiency_sensitivity)
            ends = ("0.01", "1") if f == 0 else ("−∞", "1")
            flags = [
                f"{sign}{pts}: stops at {fname} = {ends[s]}"
                for s, sign in enumerate("−+")
                if sens.clipped[j, f, s]
            ]
            if sens.locking_changed[j, f].any():
                flags.append("self-locking changes")
            rows.append(row + [", ".join(flags)])
    base = "; ".join(
        f"{titles[k]} "
        + ("none" if k == "payload" and sens.base[k] <= 0 else fmt(sens.base[k], units[k]))
        for k in columns
    )
    return table(
        ["joint", "efficiency"] + [titles[k] for k in columns] + ["note"],
        rows,
        caption=f"Each cell: value with the efficiency −{pts} / +{pts} points; none: no "
        "payload at all (a case no longer carries its own fixed load). "
        f"Design values: {base}.",
    )


def sensitivity_section(project, evaluator, arrays, fig_dir: Path, sens=None) -> Section:
    """Payload and impact metrics with each efficiency moved ±5 points: bars and a table.

    ``sens``: the :func:`.sweeps.efficiency_sensitivity` of the design when already computed.
    """
    sens = sens if sens is not None else efficiency_sensitivity(project, evaluator, arrays)
    metrics = impact_metric(project, evaluator)
    keys = [k for k in ["payload", *metrics] if k in sens.base]
    titles = {"payload": "Payload mass"}
    titles.update({c: panel_title(short, c) for c, (_k, short, _u) in metrics.items()})
    units = {"payload": "kg"}
    units.update({c: u for c, (_k, _l, u) in metrics.items()})
    cases = [k for k in sens.base if k.startswith("payload:")]
    titles.update({k: f"Payload, {k.split(':', 1)[1]}" for k in cases})
    units.update({k: "N" for k in cases})
    pts = round(100 * sens.step)
    parts = [paragraph(SENSITIVITY_GUIDE.format(pts=pts))]
    if keys:
        fig = sweep_figures.sensitivity_figure(sens, [(k, titles[k]) for k in keys])
        png = figures.save(fig, fig_dir, "efficiency-sensitivity")
        parts.append(
            figure(
                png,
                "efficiency-sensitivity",
                "sensitivity to efficiency assumptions",
                f"Change of each metric, in % of its design value, when one efficiency "
                f"moves by −{pts} (grey) or +{pts} (blue) percentage points.",
            )
        )
    gearless = frozenset(
        joint
        for j, joint in enumerate(sens.joints)
        if not np.isfinite(np.asarray(arrays.gear_peak_torque)[0, j])
    )
    parts.append(_sensitivity_table(sens, keys[:1] + cases + keys[1:], titles, units, gearless))
    return Section("sensitivity", "Sensitivity to efficiency assumptions", "".join(parts))


_DUTY_SUMMARY = ("rms_torque", "peak_torque", "peak_temperature", "backdriven_share")


def duty_data(evaluator, arrays, a: dict) -> list[dict]:
    """The duty section's dicts (:func:`.duty_view.duty_section`) for the project's duty cases.

    Motor torque per sample follows the power-flow law of :func:`metrics.duty.motor_torque` on
    the joint torques of the case's inverse dynamics with this design's actuator masses, with the
    same standstill threshold as the duty summary.
    """
    from ..dutycase import joint_torques
    from ..metrics.duty import STANDSTILL, motor_torque
    from ..metrics.signals import peak

    out = []
    cases = {c["name"]: c for c in a["cases"]}
    joints = list(evaluator.robot.actuated)
    for pd in evaluator.duty:
        tau = joint_torques(pd, arrays.mass)[0]  # (n, T)
        tm, _mode = motor_torque(
            tau,
            pd.qd,
            pd.qdd,
            arrays.ratio[0],
            arrays.eta_forward[0],
            arrays.eta_backward[0],
            arrays.rotor_inertia[0],
            standstill=STANDSTILL * peak(pd.qd),
        )
        m = cases.get(pd.case.name, {}).get("metrics", {})
        summary = [{"joint": j, **{k: m.get(f"{k}:{j}") for k in _DUTY_SUMMARY}} for j in joints]
        worst = cases.get(pd.case.name, {}).get("limiting_joint")
        limits = {}
        if worst in joints:
            k = joints.index(worst)
            limits = {
                f"{worst} continuous rating": float(arrays.motor_continuous_torque[0, k]),
                f"{worst} peak rating": float(arrays.motor_peak_torque[0, k]),
            }
        out.append(
            {
                "case": pd.case.name,
                "time": pd.trajectory.t.tolist(),
                "motor_torque": {j: tm[k].tolist() for k, j in enumerate(joints)},
                "limits": limits,
                "peak_rating": {
                    j: float(arrays.motor_peak_torque[0, k]) for k, j in enumerate(joints)
                },
                "summary": summary,
            }
        )
    return out


REGION_GUIDE = (
    "A case over a region of poses (a list, a grid over joint ranges or trajectory samples) must "
    "meet its requirements at every pose. Left: the smallest requirement margin of the case at "
    "each pose, in region order; the circled pose is the worst, the one that decides. Right: the "
    "robot at that pose seen from the side (x–z plane, joint origins joined parent to child), "
    "with the case's frame and direction."
)


def _robot_chain(robot, case):
    """Joint-origin segments (parent, child) and the case frame's position at the case's pose."""
    import pinocchio as pin

    model = robot.model
    data = model.createData()
    q = robot.configuration(case.pose, case.base_xyz, case.base_rpy)
    pin.forwardKinematics(model, data, q)
    pin.updateFramePlacements(model, data)
    chain = []
    for jid in range(1, model.njoints):
        parent = model.parents[jid]
        chain.append(
            (
                np.array(data.oMi[parent].translation),
                np.array(data.oMi[jid].translation),
            )
        )
    fid = robot.frame_id(case.frame)
    tip = np.array(data.oMf[fid].translation)
    chain.append((np.array(data.oMi[model.frames[fid].parentJoint].translation), tip))
    return chain, tip


def region_section(project, a: dict, fig_dir: Path) -> Section | None:
    """The worst pose of every region case: margins over the region and the pose drawn."""
    regions = a.get("regions") or {}
    if not regions:
        return None
    parts = [paragraph(REGION_GUIDE)]
    revolute = dict(zip(project.robot.joint_names, project.robot.revolute, strict=True))
    rows = []
    for k, (name, info) in enumerate(regions.items()):
        members = [c for c in project.cases if c.region == name]
        per: dict[str, float] = {}
        for c in a["checks"]:
            m = c["margin"]
            m = {"inf": np.inf, "-inf": -np.inf}.get(m, m) if isinstance(m, str) else m
            per[c["subject"]] = min(per.get(c["subject"], np.inf), float(m))
        margins = [per.get(c.name, np.inf) for c in members]
        worst = project.case(info["case"])
        rows.append(
            [
                name,
                str(info["poses"]),
                worst.name,
                Cell(pct(info["margin"]), "num"),
                pose_text(worst.pose, revolute),
            ]
        )
        if worst.frame is None or not np.all(np.isfinite(margins)):
            continue
        chain, tip = _robot_chain(project.robot, worst)
        fig = sweep_figures.region_figure(
            margins,
            int(info["index"]),
            chain,
            tip,
            worst.direction or (0.0, 0.0, 0.0),
            title=f"{name}: smallest margin per pose",
        )
        fname = f"region-{k + 1}"
        png = figures.save(fig, fig_dir, fname)
        parts.append(
            figure(
                png,
                fname,
                f"Region {name}",
                f"Case {name} over {info['poses']} poses; worst pose {worst.name} "
                f"(margin {fmt(100.0 * float(info['margin']), '%')}).",
            )
        )
    parts.insert(
        1,
        table(
            ["region case", "poses", "worst pose", "its margin", "joint positions (° or m)"],
            rows,
        ),
    )
    return Section("regions", "Regions of poses: the worst pose", "".join(parts))
