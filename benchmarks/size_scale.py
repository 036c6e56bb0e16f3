"""Sizing at the scale of whole robots: the default search vs Pyomo/HiGHS vs random sampling.

Instances are generated here from the bundled examples through the project API (invented
catalogs: motors scaled from the example's invented PX motors, stage frames scaled from its
invented stage types; no real product):

(a) 12-joint quadruped, no shared legs, 40 motors × 4 stage types × 3 frames, 13 kg budget,
    4 foot payload cases and 1 impact case;
(b) the same with 160 motors × 5 stage types × 4 frames;
(c) the 3-joint leg, 40 motors, imf_min 0.2, 2.5 kg budget;
(d) the leg, 40 motors, objective imf;
(e) the 12-joint quadruped with its 2 stance cases, no sharing;
(f) the leg, 2-stage stacks over 160 motors;
(g) a 30-joint invented humanoid-like tree (two 6-joint legs, two 7-joint arms, a 4-joint
    torso and neck chain) on a floating base;
(h) the bundled quadruped as shipped, legs not shared, maximizing the payload (its two stance
    cases and its leg payload case set it; its touchdown IMF limit and budget apply).

Every back-end gets the same wall-clock limit (``--limit``, default 60 s); random sampling gets
the CPU time the default search used; enumeration runs where the filtered candidates' product is
at most ENUMERATE_MAX designs (none of a-g: the line then gives the count). Prints one line per
instance and back-end: status, objective, bound, gap, wall and CPU seconds, and the load average
after each instance. Results: docs/benchmarks.md.

    python benchmarks/size_scale.py [--only a,c] [--limit 60] [--no-pyomo] [--explain]
    python benchmarks/size_scale.py --table | --three-stage | --handover [--only a]
"""

from __future__ import annotations

import jointwright  # noqa: F401, I001  (first: the command line's BLAS thread default, set before numpy loads)

import argparse
import dataclasses
import math
import os
import time
from importlib import resources

import numpy as np

from jointwright.catalog.model import Catalog
from jointwright.project import Case, Requirements, load_project

FEET = ("fl", "fr", "hl", "hr")

#: designs enumeration is run on at most (the filtered candidates' product)
ENUMERATE_MAX = 2e7


def example(name):
    with resources.as_file(resources.files("jointwright.examples") / name) as folder:
        return load_project(folder / "project.toml")


def motors(base_catalog, count: int, seed: int = 0):
    """``count`` invented motors spread over the size range of the example's motors."""
    rng = np.random.default_rng(seed)
    base = base_catalog.motors
    out = []
    for i in range(count):
        m = base[i % len(base)]
        s = float(np.exp(rng.uniform(-0.35, 0.35)))  # size factor
        out.append(
            dataclasses.replace(
                m,
                name=f"GM-{count}-{i:03d}",
                peak_torque=m.peak_torque * s**1.6,
                continuous_torque=m.continuous_torque * s**1.5,
                rotor_inertia=m.rotor_inertia * s**2,
                mass=m.mass * s,
                max_speed=m.max_speed / s**0.3,
                cost=m.cost * s,
                family=None,
                size=None,
            )
        )
    return tuple(out)


def stages(base_catalog, types: int, frames: int, seed: int = 1):
    """``types`` invented stage types (the example's, then renamed copies), ``frames`` frames each
    scaled from the type's frames."""
    rng = np.random.default_rng(seed)
    base = base_catalog.stages
    out = []
    for t in range(types):
        st = base[t % len(base)]
        fr = []
        for k in range(frames):
            f = st.frames[k % len(st.frames)]
            s = 1.0 + 0.35 * (k // len(st.frames)) + float(rng.uniform(-0.05, 0.05))
            fr.append(
                dataclasses.replace(
                    f,
                    name=f"GS{t}-{k}",
                    rated_peak_torque=f.rated_peak_torque * s**2,
                    rated_continuous_torque=f.rated_continuous_torque * s**2,
                    mass=f.mass * s**1.5,
                    input_inertia=f.input_inertia * s**2,
                    cost=f.cost * s,
                )
            )
        out.append(dataclasses.replace(st, name=f"GS{t}", frames=tuple(fr)))
    return tuple(out)


def quadruped(n_motors=40, types=4, frames=3, stance=False):
    q = example("quadruped")
    leg = example("leg")
    cat = Catalog(
        motors=motors(leg.catalog, n_motors),
        stages=stages(q.catalog, types, frames),
        drives=q.catalog.drives,
    )
    pose = next(c.pose for c in q.cases if c.kind == "stance")
    cases = [
        Case(f"{f}-push", "payload", f"{f}_foot", pose, direction=(-0.3, 0.0, -1.0), motion="along")
        for f in FEET
    ]
    cases.append(Case("fl-touchdown", "impact", "fl_foot", pose, direction=(0.0, 0.0, 1.0)))
    if stance:
        cases = [c for c in q.cases if c.kind == "stance"]
        cases = [dataclasses.replace(c, limits={}) for c in cases]
    return dataclasses.replace(
        q,
        catalog=cat,
        cases=tuple(cases),
        objective={"maximize": "payload"},
        requirements=Requirements(total_mass_max=13.0),
        max_stages=1,
        stage_kinds=None,
    )


def bundled_unshared():
    """The bundled quadruped as shipped (its catalog, 13 kg budget, two stance cases, the leg
    payload case, the touchdown IMF limit) with its legs not shared, maximizing the payload."""
    q = example("quadruped")
    objective = {"maximize": "payload"}
    return dataclasses.replace(q, objective=objective)


def leg(n_motors=40, kind="payload", imf_min=None, budget=None, max_stages=1, types=4, frames=3):
    lg = example("leg")
    cat = Catalog(motors=motors(lg.catalog, n_motors), stages=stages(lg.catalog, types, frames))
    cases = []
    for c in lg.cases:
        if c.kind == "duty":
            continue
        limits = {}
        if c.kind == "impact" and imf_min is not None:
            limits["imf_min"] = imf_min
        cases.append(dataclasses.replace(c, limits=limits))
    req = Requirements(total_mass_max=budget if budget is not None else math.inf)
    return dataclasses.replace(
        lg,
        catalog=cat,
        cases=tuple(cases),
        objective={"maximize": kind},
        requirements=req,
        max_stages=max_stages,
        stage_kinds=None,
    )


def _inertia(m, length, radius=0.03):
    """Solid-cylinder inertia about its centre, axis along the link's z."""
    a = m * (3 * radius**2 + length**2) / 12
    return [[a, 0, 0], [0, a, 0], [0, 0, m * radius**2 / 2]]


def humanoid(n_motors=40, types=4, frames=3):
    """An invented 30-joint humanoid-like robot on a floating base (written as a URDF and a
    project file in a temporary folder, read by load_project): two 6-joint legs, two 7-joint
    arms, a 2-joint waist and a 2-joint neck; 2 foot and 2 hand payload cases, one hand impact
    case, a 38 kg actuator budget."""
    import shutil
    import tempfile
    from pathlib import Path

    parts = ['<?xml version="1.0"?>', '<robot name="generated_humanoid">']

    def link(name, mass, length, radius=0.03, com_z=None):
        a = mass * (3 * radius**2 + length**2) / 12
        cz = -length / 2 if com_z is None else com_z
        parts.append(
            f'<link name="{name}"><inertial><origin xyz="0 0 {cz}" rpy="0 0 0"/><mass value="{mass}"/>'
            f'<inertia ixx="{a}" ixy="0" ixz="0" iyy="{a}" iyz="0" izz="{mass * radius**2 / 2}"/>'
            "</inertial></link>"
        )

    def joint(name, parent, child, xyz, axis):
        parts.append(
            f'<joint name="{name}" type="revolute"><parent link="{parent}"/><child link="{child}"/>'
            f'<origin xyz="{xyz[0]} {xyz[1]} {xyz[2]}" rpy="0 0 0"/><axis xyz="{axis}"/>'
            '<limit lower="-3" upper="3" effort="1000" velocity="100"/></joint>'
        )

    tips = []

    def chain(prefix, parent, origin, axes, length_total, mass_total, tip, down=True):
        seg = length_total / len(axes)
        for i, axis in enumerate(axes):
            name = f"{prefix}{i}"
            link(f"{name}_link", mass_total / len(axes), seg, com_z=-seg / 2 if down else seg / 2)
            joint(
                name,
                parent,
                f"{name}_link",
                origin if i == 0 else (0, 0, -seg if down else seg),
                axis,
            )
            parent = f"{name}_link"
        tips.append((tip, parent, -seg if down else seg))

    z, x, y = "0 0 1", "1 0 0", "0 1 0"
    link("pelvis", 8.0, 0.2, 0.12, com_z=0.0)
    chain("l_leg", "pelvis", (0, 0.1, -0.05), [z, x, y, y, y, x], 0.9, 9.0, "l_foot")
    chain("r_leg", "pelvis", (0, -0.1, -0.05), [z, x, y, y, y, x], 0.9, 9.0, "r_foot")
    chain("waist", "pelvis", (0, 0, 0.1), [z, y], 0.1, 2.0, "waist_tip", down=False)
    link("chest", 12.0, 0.3, 0.15, com_z=0.15)
    parts.append(
        '<joint name="chest_fix" type="fixed"><parent link="waist1_link"/><child link="chest"/>'
        '<origin xyz="0 0 0.05" rpy="0 0 0"/></joint>'
    )
    chain("l_arm", "chest", (0, 0.2, 0.3), [y, x, z, y, z, y, x], 0.6, 4.0, "l_hand")
    chain("r_arm", "chest", (0, -0.2, 0.3), [y, x, z, y, z, y, x], 0.6, 4.0, "r_hand")
    chain("neck", "chest", (0, 0, 0.35), [z, y], 0.12, 2.0, "head_top", down=False)
    parts.append("</robot>")
    joint_names = [ln.split('"')[1] for ln in parts if ln.startswith("<joint") and "revolute" in ln]
    folder = Path(tempfile.mkdtemp(prefix="humanoid-"))
    (folder / "humanoid.urdf").write_text("\n".join(parts), encoding="utf-8")
    with resources.as_file(resources.files("jointwright.examples") / "quadruped") as q_folder:
        shutil.copy(q_folder / "catalog.toml", folder / "catalog.toml")
    frames_toml = ", ".join(
        f'{{ name = "{t}", link = "{lk}", xyz = [0.0, 0.0, {dz}] }}' for t, lk, dz in tips
    )
    (folder / "project.toml").write_text(
        '[project]\nname = "generated humanoid"\n\n[robot]\nurdf = "humanoid.urdf"\nbase = "floating"\n'
        f'frames = [{frames_toml}]\n\n[catalog]\nfiles = ["catalog.toml"]\nmax_stages = 1\n\n'
        "[poses.zero]\n"
        + "".join(f"{j} = 0\n" for j in joint_names)
        + '\n[[case]]\nname = "l-foot-push"\nkind = "payload"\npose = "zero"\n'
        'frame = "l_foot"\ndirection = [0, 0, -1]\n',
        encoding="utf-8",
    )
    p = load_project(folder / "project.toml")
    shutil.rmtree(folder)
    pose = {j: 0.0 for j in p.robot.actuated}
    for side in ("l", "r"):
        pose[f"{side}_leg2"], pose[f"{side}_leg3"], pose[f"{side}_leg4"] = -0.4, 0.8, -0.4
        pose[f"{side}_arm3"] = -0.6
    cases = [
        Case(
            f"{s_}-foot-push",
            "payload",
            f"{s_}_foot",
            pose,
            direction=(0.0, 0.0, -1.0),
            motion="along",
        )
        for s_ in ("l", "r")
    ]
    cases += [
        Case(
            f"{s_}-hand-lift",
            "payload",
            f"{s_}_hand",
            pose,
            direction=(0.0, 0.0, 1.0),
            motion="along",
        )
        for s_ in ("l", "r")
    ]
    cases.append(Case("hand-bump", "impact", "r_hand", pose, direction=(1.0, 0.0, 0.0)))
    lg, q = example("leg"), example("quadruped")
    cat = Catalog(motors=motors(lg.catalog, n_motors), stages=stages(q.catalog, types, frames))
    return dataclasses.replace(
        p,
        catalog=cat,
        cases=tuple(cases),
        objective={"maximize": "payload"},
        requirements=Requirements(total_mass_max=38.0),
        max_stages=1,
        stage_kinds=None,
    )


INSTANCES = {
    "a": (
        "quadruped, 40 motors x 4 types x 3 frames, 13 kg, 4 foot payload + impact",
        lambda: quadruped(40, 4, 3),
    ),
    "b": ("quadruped, 160 motors x 5 types x 4 frames, 13 kg", lambda: quadruped(160, 5, 4)),
    "c": ("leg, 40 motors, imf_min 0.2, 2.5 kg", lambda: leg(40, imf_min=0.2, budget=2.5)),
    "d": ("leg, 40 motors, objective imf", lambda: leg(40, kind="imf")),
    "e": ("quadruped, 2 stance cases, no sharing", lambda: quadruped(40, 4, 3, stance=True)),
    "f": ("leg, 2-stage stacks, 160 motors x 4 types x 3 frames", lambda: leg(160, max_stages=2)),
    "g": ("30-joint humanoid, 40 motors, 38 kg, 4 payload + impact", lambda: humanoid()),
    "h": (
        "bundled quadruped, legs not shared, payload objective (2 stance + 1 payload case)",
        lambda: bundled_unshared(),
    ),
}


def cpu():
    t = os.times()
    return t.user + t.system + t.children_user + t.children_system


def random_sampling(project, kind, seconds, seed=0):
    """Uniform random designs from the per-joint filtered options, scored in batches, for
    ``seconds`` of CPU time: the best feasible one."""
    from jointwright.sizing import build_model, read_objective

    cfg = read_objective(project)
    model, _ = build_model(project, kind, cfg["pin"], cfg["exclude"], cfg["shared"])
    rng = np.random.default_rng(seed)
    end = cpu() + seconds
    best, count, found = None, 0, 0
    while cpu() < end:
        idx = np.stack([rng.choice(c, 256) for c in model.candidates], axis=1)
        s = model.score(idx)
        count += idx.shape[0]
        found += int(np.count_nonzero(s.feasible))
        row = model.best(s)
        if row is not None:
            key = model.key(s, row)
            if model.better(key, best):
                best = key
    sense = -1.0 if kind == "mass" else 1.0
    space = math.prod(float(c.size) for c in model.candidates)
    return (None if best is None else sense * best[0]), count, found, space


def run(name, limit, pyomo=True, explain=False):
    from jointwright.sizing import size

    label, make = INSTANCES[name]
    p = make()
    kind = p.objective["maximize"]
    print(f"({name}) {label}")
    rows = []
    for backend in ("search", "pyomo") if pyomo and kind != "imf" else ("search",):
        c0, t0 = cpu(), time.perf_counter()
        try:
            r = size(p, backend=backend, time_limit=limit, explain=explain)
            text = (
                f"{r.status:10s} objective {r.objective:10.4f} bound {r.bound:10.4f} gap {r.gap:9.2e}"
                f"  ({r.native_status})"
            )
            if explain:
                text += f"; {len(r.alternatives)} runner-ups"
        except Exception as e:  # a back-end refusing the instance is a result too
            text = f"refused: {str(e)[:90]}"
        c1, t1 = cpu(), time.perf_counter()
        rows.append((backend, c1 - c0))
        print(f"    {backend:8s} {text}  wall {t1 - t0:6.1f} s  CPU {c1 - c0:6.1f} s", flush=True)
    cpu_search = rows[0][1]
    try:
        best, count, found, space = random_sampling(p, kind, max(cpu_search, 1.0))
    except Exception as e:
        print(f"    random   refused: {str(e)[:90]}")
        return
    print(
        f"    random   {count} designs in {max(cpu_search, 1.0):.1f} CPU-s, {found} feasible, best "
        f"{'—' if best is None else f'{best:.4f}'}",
        flush=True,
    )
    if space <= ENUMERATE_MAX:
        from jointwright.sizing import size

        c0 = cpu()
        r = size(p, backend="enumerate", explain=False)
        print(f"    enumerate {r.status} objective {r.objective:.4f}  CPU {cpu() - c0:.1f} s")
    else:
        print(f"    enumerate does not fit: {space:.3g} designs over the filtered candidates")


def table_building():
    """The bundled leg with 2-stage stacks: the numpy-built option table against the per-option
    formulas it replaces (CPU seconds and peak traced memory)."""
    import tracemalloc

    from jointwright.design import actuator_row
    from jointwright.options import build_table

    p = dataclasses.replace(example("leg"), max_stages=2)
    tracemalloc.start()
    c0 = time.process_time()
    table = build_table(p)
    c1 = time.process_time()
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    tracemalloc.start()
    c2 = time.process_time()
    rows = [actuator_row(a) for a in table.actuators]
    c3 = time.process_time()
    peak2 = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    print(
        f"option table, leg with 2-stage stacks, {len(table)} options: numpy {c1 - c0:.2f} CPU-s, "
        f"peak {peak / 1e6:.1f} MB; per-option formulas {c3 - c2:.2f} CPU-s, peak "
        f"{peak2 / 1e6:.1f} MB ({len(rows)} rows)"
    )


def three_stage_tables():
    """The bundled leg with 3-stage stacks: the stacks left by dominance (stack_dominance.py)
    with the leg's own cases and without its duty and stroke speed cases (which read the stages'
    inertia in both directions), CPU seconds and peak resident memory of building each table."""
    import resource

    import jointwright.options as options

    lg = example("leg")
    ceiling = options.MAX_OPTIONS
    options.MAX_OPTIONS = 10**8  # measured, not sized: the ceiling is checked by size() itself
    try:
        for label, cases in (
            ("the leg's cases", lg.cases),
            (
                "without duty and speed",
                tuple(c for c in lg.cases if c.kind not in ("duty", "speed")),
            ),
        ):
            p = dataclasses.replace(lg, max_stages=3, stage_kinds=None, cases=cases)
            c0 = time.process_time()
            t = options.build_table(p, dominance=True)
            c1 = time.process_time()
            rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1e6
            print(
                f"3-stage leg, {label}: {len(t.actuators.stacks)} stacks kept, {len(t)} options "
                f"({'over' if len(t) > ceiling else 'within'} the {ceiling} ceiling); "
                f"{c1 - c0:.1f} CPU-s, peak resident so far {rss:.2f} GB"
            )
    finally:
        options.MAX_OPTIONS = ceiling


def handover(names, limit):
    """The MILP hand-over's engines side by side on one instance: the algebraic Pyomo model, the
    matrix-form model (solve/milp_matrix.py) from scratch, and the matrix-form model from the
    primal heuristics' design (what the default runs); wall and CPU seconds of each."""
    from jointwright.sizing import build_model, read_objective, units_of
    from jointwright.solve.engines import first_design
    from jointwright.solve.milp_matrix import solve_matrix_milp
    from jointwright.solve.pyomo_backend import solve_pyomo

    for name in names:
        label, make = INSTANCES[name]
        p = make()
        cfg = read_objective(p)
        model, _ = build_model(p, "payload", cfg["pin"], cfg["exclude"], cfg["shared"])
        print(f"({name}) {label}: {sum(int(c.size) for c in model.candidates)} binaries")
        c0, t0 = cpu(), time.perf_counter()
        key = first_design(model, units_of(model.n, model.shared), limit)
        heur = (time.perf_counter() - t0, cpu() - c0)
        print(
            f"    heuristics  {'—' if key is None else f'{key[0]:.4f}'}  wall {heur[0]:6.1f} s  "
            f"CPU {heur[1]:6.1f} s"
        )
        runs = (
            ("pyomo", lambda: solve_pyomo(model, None, time_limit=limit)),
            ("matrix", lambda: solve_matrix_milp(model, time_limit=limit)),
            (
                "matrix+start",
                lambda: solve_matrix_milp(
                    model, time_limit=limit, start=None if key is None else np.asarray(key[3])
                ),
            ),
        )
        base = None
        for label_, fn in runs:
            c0, t0 = cpu(), time.perf_counter()
            out = fn()
            wall, used = time.perf_counter() - t0, cpu() - c0
            if label_ == "matrix+start":
                wall, used = wall + heur[0], used + heur[1]  # the default pays for the start
            base = base or wall
            print(
                f"    {label_:12s} {out.status:10s} {out.objective:10.4f} bound {out.bound:10.4f}  "
                f"wall {wall:6.1f} s  CPU {used:6.1f} s  ({base / wall:.2f}x the Pyomo wall)",
                flush=True,
            )
        print(f"    load average {os.getloadavg()[0]:.2f}", flush=True)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--only", default=",".join(INSTANCES))
    ap.add_argument("--limit", type=float, default=60.0)
    ap.add_argument("--no-pyomo", action="store_true")
    ap.add_argument(
        "--explain", action="store_true", help="size with the explanation, as the CLI does"
    )
    ap.add_argument("--table", action="store_true", help="time the option-table building only")
    ap.add_argument(
        "--three-stage", action="store_true", help="the 3-stage leg tables after stack dominance"
    )
    ap.add_argument(
        "--handover", action="store_true", help="the MILP hand-over's engines side by side"
    )
    a = ap.parse_args()
    if a.handover:
        handover(a.only.split(",") if a.only != ",".join(INSTANCES) else ["a"], a.limit)
        return
    if a.table:
        table_building()
        return
    if a.three_stage:
        three_stage_tables()
        return
    print(
        f"load average {os.getloadavg()[0]:.2f} on {os.cpu_count()} cores; time limit {a.limit} s"
    )
    for name in a.only.split(","):
        run(name, a.limit, not a.no_pyomo, a.explain)
        print(f"    load average {os.getloadavg()[0]:.2f}", flush=True)


if __name__ == "__main__":
    main()
