"""A robot from the project file's inline tables of links, joints and frames (docs/robot-format.md).

Builds the Pinocchio model: link inertias from explicit tensors or simple shapes, joints in
depth-first tree order, named frames. Used by :meth:`jointwright.robot.model.Robot.from_links`.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
import pinocchio as pin

from ..errors import InputError, check_keys
from ..units import positive, quantity

#: gravity used when a file gives none (m/s², world frame)
DEFAULT_GRAVITY = (0.0, 0.0, -9.81)
#: name Pinocchio gives the free-flyer joint of a floating base
BASE_JOINT = "root_joint"

_ROBOT_KEYS = (
    "name",
    "base",
    "gravity",
    "links",
    "joints",
    "frames",
    "actuated",
    "unactuated",
    "included",
)
_MOUNT_KEYS = ("mount", "mount_link", "mount_xyz")
_LINK_KEYS = ("name", "mass", "com", "inertia", "shape", "length", "along", "size")
_JOINT_KEYS = ("name", "type", "parent", "child", "xyz", "rpy", "axis", "lower", "upper")
_FRAME_KEYS = ("name", "link", "xyz")
_BIG = float(np.finfo(float).max)


# ---------------------------------------------------------------------- value parsing
def _check_keys(entry: Mapping, allowed: Sequence[str], file: str, where: str) -> None:
    check_keys(entry, allowed, file, where)


def _table(entry: Any, file: str, where: str) -> Mapping:
    if not isinstance(entry, Mapping):
        raise InputError(file, where, f"must be a table, got {type(entry).__name__}")
    return entry


def _required(entry: Mapping, key: str, file: str, where: str) -> Any:
    if key not in entry:
        raise InputError(file, f"{where}.{key}", "required")
    return entry[key]


def _name(entry: Mapping, file: str, where: str) -> str:
    name = _required(entry, "name", file, where)
    if not isinstance(name, str) or not name.strip():
        raise InputError(file, f"{where}.name", f"must be a non-empty string, got {name!r}")
    return name


def _vec3(value: Any, dim: str, file: str, where: str) -> np.ndarray:
    """Three quantities of dimension ``dim`` -> float array (3,) in SI."""
    if isinstance(value, np.ndarray):
        value = value.tolist()
    if isinstance(value, (str, Mapping)) or not isinstance(value, Sequence) or len(value) != 3:
        raise InputError(file, where, f"must be a list of 3 numbers or quantities, got {value!r}")
    return np.array(
        [quantity(v, dim, file=file, field=f"{where}[{i}]") for i, v in enumerate(value)]
    )


def _list_of_tables(table: Mapping, key: str, file: str, where: str, *, required: bool) -> list:
    value = table.get(key, [])
    if required and not value:
        raise InputError(file, f"{where}.{key}", "required: at least one entry")
    if not isinstance(value, list):
        raise InputError(file, f"{where}.{key}", "must be a list of tables ([[...]] in TOML)")
    return [_table(v, file, f"{where}.{key}[{i}]") for i, v in enumerate(value)]


# ---------------------------------------------------------------------- links and inertia
def _link_inertia(entry: Mapping, file: str, where: str) -> pin.Inertia:
    """Spatial inertia of one link table: mass (> 0), centre of mass, rotational inertia."""
    _check_keys(entry, _LINK_KEYS, file, where)
    mass = positive(_required(entry, "mass", file, where), "mass", file=file, field=f"{where}.mass")
    com = _vec3(entry.get("com", (0, 0, 0)), "length", file, f"{where}.com")
    if ("inertia" in entry) == ("shape" in entry):
        raise InputError(file, f"{where}.inertia", "give exactly one of inertia or shape")
    if "inertia" in entry:
        for key in ("length", "along", "size"):
            if key in entry:
                raise InputError(file, f"{where}.{key}", "only with shape, not with inertia")
        rot = _inertia_matrix(entry["inertia"], file, f"{where}.inertia")
    else:
        rot = _shape_inertia(entry, mass, file, where)
    return pin.Inertia(mass, com, rot)


def _inertia_matrix(value: Any, file: str, where: str) -> np.ndarray:
    """A diagonal [Ixx, Iyy, Izz] or a full 3×3 list, kg·m² about the centre of mass."""
    if isinstance(value, list) and len(value) == 3 and all(isinstance(r, list) for r in value):
        rows = [_vec3(r, "inertia", file, f"{where}[{i}]") for i, r in enumerate(value)]
        rot = np.array(rows)
    elif isinstance(value, list) and len(value) == 3:
        rot = np.diag(_vec3(value, "inertia", file, where))
    else:
        raise InputError(file, where, "must be [Ixx, Iyy, Izz] or a 3×3 list of rows")
    scale = max(float(np.abs(rot).max()), 1e-300)
    tol = 1e-9 * scale
    if not np.allclose(rot, rot.T, rtol=0.0, atol=tol):
        raise InputError(file, where, "must be symmetric")
    moments = np.linalg.eigvalsh(0.5 * (rot + rot.T))
    if moments[0] < -tol:
        raise InputError(file, where, "must be positive semidefinite (a principal moment < 0)")
    if moments[2] > moments[0] + moments[1] + tol:
        rule = "principal moments break the triangle inequality (I1 + I2 >= I3)"
        raise InputError(file, where, rule)
    return 0.5 * (rot + rot.T)


def _shape_inertia(entry: Mapping, mass: float, file: str, where: str) -> np.ndarray:
    """Rotational inertia about the centre of mass of a point, thin rod or solid box."""
    shape = entry["shape"]
    allowed = {"point": (), "rod": ("length", "along"), "box": ("size",)}
    if shape not in allowed:
        raise InputError(file, f"{where}.shape", f"must be point, rod or box, got {shape!r}")
    for key in ("length", "along", "size"):
        if key in entry and key not in allowed[shape]:
            raise InputError(file, f"{where}.{key}", f"not a field of shape {shape!r}")
    if shape == "point":
        return np.zeros((3, 3))
    if shape == "rod":  # thin rod: m·L²/12 about both transverse axes, 0 about its own
        length = positive(
            _required(entry, "length", file, where), "length", file=file, field=f"{where}.length"
        )
        along = entry.get("along", "x")
        if along not in ("x", "y", "z"):
            raise InputError(file, f"{where}.along", f"must be x, y or z, got {along!r}")
        diag = np.full(3, mass * length**2 / 12.0)
        diag["xyz".index(along)] = 0.0
        return np.diag(diag)
    size = _vec3(_required(entry, "size", file, where), "length", file, f"{where}.size")
    if np.any(size <= 0):
        raise InputError(file, f"{where}.size", "every side must be > 0 m")
    a2 = size**2  # solid box: Ixx = m(b² + c²)/12, ...
    return np.diag(mass / 12.0 * (a2.sum() - a2))


# ---------------------------------------------------------------------- joints and the tree
def _joint_entry(entry: Mapping, file: str, where: str) -> dict:
    """Parse one joint table to plain SI values (tree checks come later)."""
    _check_keys(entry, _JOINT_KEYS + _MOUNT_KEYS, file, where)
    name = _name(entry, file, where)
    kind = _required(entry, "type", file, where)
    if kind not in ("revolute", "prismatic", "fixed"):
        rule = f"must be revolute, prismatic or fixed, got {kind!r}"
        raise InputError(file, f"{where}.type", rule)
    out = {"name": name, "type": kind, "where": where}
    for key in ("parent", "child"):
        value = _required(entry, key, file, where)
        if not isinstance(value, str):
            raise InputError(file, f"{where}.{key}", f"must be a link name, got {value!r}")
        out[key] = value
    out["xyz"] = _vec3(entry.get("xyz", (0, 0, 0)), "length", file, f"{where}.xyz")
    out["rpy"] = _vec3(entry.get("rpy", (0, 0, 0)), "angle", file, f"{where}.rpy")
    if kind == "fixed":
        for key in ("axis", "lower", "upper") + _MOUNT_KEYS:
            if key in entry:
                raise InputError(file, f"{where}.{key}", "not a field of a fixed joint")
        return out
    axis = _vec3(_required(entry, "axis", file, where), "dimensionless", file, f"{where}.axis")
    norm = float(np.linalg.norm(axis))
    if norm < 1e-9:
        raise InputError(file, f"{where}.axis", "must not be the zero vector")
    out["axis"] = axis / norm
    dim = "angle" if kind == "revolute" else "length"
    lim = [
        quantity(entry[k], dim, file=file, field=f"{where}.{k}") if k in entry else None
        for k in ("lower", "upper")
    ]
    if lim[0] is not None and lim[1] is not None and not lim[0] < lim[1]:
        raise InputError(file, f"{where}.upper", f"must be > lower ({lim[0]:g})")
    out["lower"] = -_BIG if lim[0] is None else lim[0]
    out["upper"] = _BIG if lim[1] is None else lim[1]
    out["mount_spec"] = {k: entry[k] for k in _MOUNT_KEYS if k in entry}
    return out


def _joint_model(kind: str, axis: np.ndarray):
    """Pinocchio joint model; axis-aligned joints get the specialised (faster) models."""
    for i, letter in enumerate("XYZ"):
        if np.allclose(axis, np.eye(3)[i], atol=1e-12):
            return getattr(pin, f"JointModel{'R' if kind == 'revolute' else 'P'}{letter}")()
    if kind == "revolute":
        return pin.JointModelRevoluteUnaligned(axis)
    return pin.JointModelPrismaticUnaligned(axis)


def _tree_order(links: dict, joints: list[dict], file: str, where: str) -> tuple[str, list[dict]]:
    """Root link and the joints in depth-first order; reject loops, cycles and strays."""
    parent_of: dict[str, dict] = {}
    for j in joints:
        for key in ("parent", "child"):
            if j[key] not in links:
                raise InputError(file, f"{j['where']}.{key}", f"no link named {j[key]!r}")
        if j["parent"] == j["child"]:
            raise InputError(file, f"{j['where']}.child", "a joint cannot join a link to itself")
        if j["child"] in parent_of:
            rule = f"link {j['child']!r} is already the child of {parent_of[j['child']]['name']!r}"
            raise InputError(file, f"{j['where']}.child", rule + " (closed loops are not trees)")
        parent_of[j["child"]] = j
    roots = [name for name in links if name not in parent_of]
    if len(roots) != 1:
        rule = "the links form a cycle" if not roots else f"several root links {roots}"
        raise InputError(file, f"{where}.joints", f"must form one tree: {rule}")
    # depth-first preorder of the joints: Pinocchio needs every subtree's joints contiguous
    # (its algorithms walk a joint's subtree as a range of indices)
    children: dict[str, list[dict]] = {}
    for j in joints:
        children.setdefault(j["parent"], []).append(j)
    order, stack = [], list(reversed(children.get(roots[0], [])))
    while stack:
        j = stack.pop()
        order.append(j)
        stack.extend(reversed(children.get(j["child"], [])))
    if len(order) != len(joints):
        stray = next(j for j in joints if j not in order)
        raise InputError(file, f"{stray['where']}.parent", "the links form a cycle")
    return roots[0], order


def _build_from_table(table: Any, file: str, prefix: str):
    """Robot table -> (pinocchio.Model, base, mount specs). See docs/robot-format.md."""
    table = _table(table, file, prefix)
    _check_keys(table, _ROBOT_KEYS, file, prefix)
    base = _required(table, "base", file, prefix)
    if base not in ("fixed", "floating"):
        raise InputError(file, f"{prefix}.base", f"must be 'fixed' or 'floating', got {base!r}")
    links: dict[str, pin.Inertia] = {}
    used: dict[str, str] = {"universe": "reserved", BASE_JOINT: "reserved"}
    for i, entry in enumerate(_list_of_tables(table, "links", file, prefix, required=True)):
        where = f"{prefix}.links[{i}]"
        name = _unique(_name(entry, file, where), used, file, where)
        links[name] = _link_inertia(entry, file, where)
    joints = []
    for i, entry in enumerate(_list_of_tables(table, "joints", file, prefix, required=False)):
        where = f"{prefix}.joints[{i}]"
        joints.append(_joint_entry(entry, file, where))
        _unique(joints[-1]["name"], used, file, where)
    root, order = _tree_order(links, joints, file, prefix)
    model = pin.Model()
    model.name = str(table.get("name", "robot"))
    model.gravity.linear = _vec3(
        table.get("gravity", DEFAULT_GRAVITY), "acceleration", file, f"{prefix}.gravity"
    )
    place = {root: _attach_root(model, root, links[root], base == "floating")}
    for j in order:
        place[j["child"]] = _attach_joint(model, j, place[j["parent"]], links[j["child"]])
    _add_frames(
        model,
        _list_of_tables(table, "frames", file, prefix, required=False),
        file,
        f"{prefix}.frames",
    )
    specs = {j["name"]: (j["mount_spec"], j["where"]) for j in joints if j.get("mount_spec")}
    return model, base, specs


def _unique(name: str, used: dict[str, str], file: str, where: str) -> str:
    if name in used:
        raise InputError(file, f"{where}.name", f"name {name!r} is already used ({used[name]})")
    used[name] = where
    return name


def _attach_root(model, name: str, inertia, floating: bool):
    """Root link on the world (fixed base) or on a free-flyer joint; returns its placement."""
    jid, frame = 0, 0
    if floating:
        jid = model.addJoint(0, pin.JointModelFreeFlyer(), pin.SE3.Identity(), BASE_JOINT)
        frame = model.addJointFrame(jid, 0)
    model.appendBodyToJoint(jid, inertia, pin.SE3.Identity())
    return jid, pin.SE3.Identity(), model.addBodyFrame(name, jid, pin.SE3.Identity(), frame)


def _attach_joint(model, j: dict, parent_place, inertia):
    """Add joint ``j`` below its parent link and its child link; returns the child's placement."""
    pjid, p_in_joint, pframe = parent_place
    origin = p_in_joint * pin.SE3(pin.rpy.rpyToMatrix(*j["rpy"]), j["xyz"])
    if j["type"] == "fixed":
        fixed = pin.Frame(j["name"], pjid, pframe, origin, pin.FrameType.FIXED_JOINT)
        frame = model.addFrame(fixed)
        model.appendBodyToJoint(pjid, inertia, origin)
        return pjid, origin, model.addBodyFrame(j["child"], pjid, origin, frame)
    one = np.ones(1)
    jid = model.addJoint(
        pjid,
        _joint_model(j["type"], j["axis"]),
        origin,
        j["name"],
        _BIG * one,
        _BIG * one,
        j["lower"] * one,
        j["upper"] * one,
    )
    frame = model.addJointFrame(jid, pframe)
    model.appendBodyToJoint(jid, inertia, pin.SE3.Identity())
    return jid, pin.SE3.Identity(), model.addBodyFrame(j["child"], jid, pin.SE3.Identity(), frame)


def _add_frames(model, frames: Sequence[Mapping], file: str, where: str) -> None:
    """Named points ``{name, link, xyz}`` as operational frames on their link's body."""
    if isinstance(frames, Mapping) or not isinstance(frames, Sequence):
        raise InputError(file, where, "must be a list of tables {name, link, xyz}")
    bodies = {f.name: (i, f) for i, f in enumerate(model.frames) if f.type == pin.FrameType.BODY}
    for i, entry in enumerate(frames):
        at = f"{where}[{i}]"
        entry = _table(entry, file, at)
        _check_keys(entry, _FRAME_KEYS, file, at)
        name = _name(entry, file, at)
        if model.existFrame(name) or model.existJointName(name):
            raise InputError(file, f"{at}.name", f"name {name!r} is already used in the robot")
        link = _required(entry, "link", file, at)
        if link not in bodies:
            raise InputError(file, f"{at}.link", f"no link named {link!r}")
        xyz = _vec3(_required(entry, "xyz", file, at), "length", file, f"{at}.xyz")
        fid, body = bodies[link]
        placement = body.placement * pin.SE3(np.eye(3), xyz)
        model.addFrame(pin.Frame(name, body.parentJoint, fid, placement, pin.FrameType.OP_FRAME))
