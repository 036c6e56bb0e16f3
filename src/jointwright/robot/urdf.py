"""URDF text: reading, the checks made before Pinocchio parses it, the robot's own floating
joint, and the Pinocchio model built from it (:func:`build_from_urdf`).

A URDF may declare the free motion of its base itself, as a ``floating`` joint from a massless
root link (often named ``world``) to the trunk. jointwright gives a floating robot exactly one
free-flyer joint, so that joint and its root link are taken out of the text here and the base is
made floating instead (docs/robot-format.md). Joint limits are checked for order; ``<mimic>``
joints are read by Pinocchio as followers of their leader (no degree of freedom of their own).
"""

from __future__ import annotations

import xml.etree.ElementTree as ET
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import pinocchio as pin

from ..errors import InputError
from .actuation import _mount_specs
from .table import DEFAULT_GRAVITY, _add_frames, _vec3

#: joint types of the URDF specification
JOINT_TYPES = ("revolute", "continuous", "prismatic", "fixed", "floating", "planar")


@dataclass(frozen=True)
class UrdfText:
    """A checked URDF: the text to give Pinocchio and what was found in it.

    Attributes
    ----------
    text : str
        URDF text, without the robot's own floating joint when it had one.
    floating_joint : str or None
        Name of the floating joint the file declared (removed from ``text``).
    mimic : dict
        Follower joint -> (leader joint, multiplier, offset).
    """

    text: str
    floating_joint: str | None
    mimic: dict


def read_urdf(path: str) -> UrdfText:
    """Read, check and prepare a URDF file; every problem is one InputError naming it."""
    file = str(path)
    try:
        with open(path, encoding="utf-8") as fh:
            text = fh.read()
    except UnicodeDecodeError:
        raise InputError(file, "urdf", "must be UTF-8 text") from None
    except OSError as exc:
        raise InputError(file, "urdf", f"cannot read the file ({exc.strerror})") from None
    root = check_urdf_text(text, file)
    mimic = {}
    for e in root.findall("joint"):
        m = e.find("mimic")
        if m is not None:
            name = e.get("name")
            where = f"urdf.joint[{name}].mimic"
            leader = m.get("joint")
            joints = {j.get("name") for j in root.findall("joint")}
            if leader not in joints:
                raise InputError(file, where, f"no joint named {leader!r} to follow")
            mult = _urdf_numbers(m.get("multiplier", "1"), 1, file, f"{where}.multiplier")[0]
            off = _urdf_numbers(m.get("offset", "0"), 1, file, f"{where}.offset")[0]
            mimic[name] = (leader, float(mult), float(off))
    floating = _strip_floating_root(root, file)
    if floating is not None:
        text = ET.tostring(root, encoding="unicode")
    return UrdfText(text=text, floating_joint=floating, mimic=mimic)


def _strip_floating_root(root, file: str) -> str | None:
    """Remove a ``floating`` joint from a massless root link, with that link; its name or None."""
    floating = [e for e in root.findall("joint") if e.get("type") == "floating"]
    if not floating:
        return None
    if len(floating) > 1:
        names = ", ".join(e.get("name") or "?" for e in floating)
        raise InputError(
            file,
            "urdf.joint",
            f"declares {len(floating)} floating joints ({names}); a robot has one floating base",
        )
    joint = floating[0]
    name = joint.get("name") or "?"
    parent = joint.find("parent").get("link")
    children = {e.find("child").get("link") for e in root.findall("joint")}
    where = f"urdf.joint[{name}]"
    if parent in children:
        raise InputError(
            file,
            where,
            "a floating joint must leave the root link of the tree "
            "(it stands for the free motion of the whole robot)",
        )
    others = [
        e
        for e in root.findall("joint")
        if e is not joint and e.find("parent").get("link") == parent
    ]
    if others:
        raise InputError(
            file,
            where,
            f"the root link {parent!r} of the floating joint carries "
            f"other joints too ({others[0].get('name')}); it must hold only the floating joint",
        )
    link = next(e for e in root.findall("link") if e.get("name") == parent)
    mass = link.find("inertial/mass")
    if (
        mass is not None
        and _urdf_numbers(
            mass.get("value", "0"), 1, file, f"urdf.link[{parent}].inertial.mass.value"
        )[0]
        > 0
    ):
        raise InputError(
            file,
            f"urdf.link[{parent}].inertial",
            "the root link of a floating joint must be massless (it stands for the world)",
        )
    root.remove(joint)
    root.remove(link)
    return name


def check_urdf_text(text: str, file: str):
    """Catch the common URDF mistakes with a precise message before Pinocchio parses it.

    Returns the parsed XML root element.
    """
    try:
        root = ET.fromstring(text)
    except ET.ParseError as exc:
        raise InputError(file, f"urdf line {exc.position[0]}", f"malformed XML ({exc})") from None
    if root.tag != "robot":
        raise InputError(file, "urdf", f"the root element must be <robot>, got <{root.tag}>")
    links = [e.get("name") for e in root.findall("link")]
    if not links or any(not n for n in links):
        raise InputError(file, "urdf.link", "needs at least one <link>, each with a name")
    for link in root.findall("link"):  # inertial, visual and collision origins
        for part in link:
            origin = part.find("origin")
            for key in ("xyz", "rpy"):
                if origin is not None and origin.get(key) is not None:
                    _urdf_numbers(
                        origin.get(key, ""),
                        3,
                        file,
                        f"urdf.link[{link.get('name')}].{part.tag}.origin.{key}",
                    )
    for e in root.findall("joint"):
        name = e.get("name") or "?"
        if e.get("type") not in JOINT_TYPES:
            raise InputError(
                file,
                f"urdf.joint[{name}].type",
                f"must be one of {', '.join(JOINT_TYPES)}; got {e.get('type')!r}",
            )
        origin = e.find("origin")
        if origin is not None:
            for key in ("xyz", "rpy"):
                if origin.get(key) is not None:
                    _urdf_numbers(origin.get(key), 3, file, f"urdf.joint[{name}].origin.{key}")
        for key in ("parent", "child"):
            ref = e.find(key)
            if ref is None or ref.get("link") not in links:
                got = None if ref is None else ref.get("link")
                raise InputError(file, f"urdf.joint[{name}].{key}", f"no link named {got!r}")
        if e.get("type") in ("revolute", "prismatic") and e.find("limit") is None:
            raise InputError(file, f"urdf.joint[{name}].limit", "required for this joint type")
        limit = e.find("limit")
        if limit is not None and e.get("type") in ("revolute", "prismatic"):
            where = f"urdf.joint[{name}].limit"
            lo = _urdf_numbers(limit.get("lower", "0"), 1, file, f"{where}.lower")[0]
            hi = _urdf_numbers(limit.get("upper", "0"), 1, file, f"{where}.upper")[0]
            if lo > hi:
                raise InputError(file, f"{where}.lower", f"must not exceed upper ({lo:g} > {hi:g})")
            for key in ("effort", "velocity"):
                if limit.get(key) is not None:
                    v = _urdf_numbers(limit.get(key), 1, file, f"{where}.{key}")[0]
                    if v < 0:
                        raise InputError(file, f"{where}.{key}", f"must be >= 0, got {v:g}")
        axis = e.find("axis")
        if axis is not None and e.get("type") in ("revolute", "continuous", "prismatic"):
            values = _urdf_numbers(
                axis.get("xyz", "1 0 0"), 3, file, f"urdf.joint[{name}].axis.xyz"
            )
            if not np.linalg.norm(values) > 0:
                raise InputError(
                    file, f"urdf.joint[{name}].axis.xyz", "must not be the zero vector"
                )
    for e in root.findall("link"):
        inertial = e.find("inertial")
        if inertial is None:
            continue
        where = f"urdf.link[{e.get('name')}].inertial"
        mass = inertial.find("mass")
        if mass is not None:
            m = _urdf_numbers(mass.get("value", ""), 1, file, f"{where}.mass.value")[0]
            if m < 0:
                raise InputError(file, f"{where}.mass.value", f"must be >= 0 kg, got {m:g}")
        inertia = inertial.find("inertia")
        if inertia is not None:
            keys = ("ixx", "ixy", "ixz", "iyy", "iyz", "izz")
            v = {
                k: _urdf_numbers(inertia.get(k, "0"), 1, file, f"{where}.inertia.{k}")[0]
                for k in keys
            }
            tensor = np.array(
                [
                    [v["ixx"], v["ixy"], v["ixz"]],
                    [v["ixy"], v["iyy"], v["iyz"]],
                    [v["ixz"], v["iyz"], v["izz"]],
                ]
            )
            if np.linalg.eigvalsh(tensor).min() < -1e-12 * max(1.0, np.abs(tensor).max()):
                raise InputError(
                    file, f"{where}.inertia", "must be positive semidefinite (a physical inertia)"
                )
    return root


def _urdf_numbers(text: str | None, count: int, file: str, field: str) -> np.ndarray:
    """``count`` numbers from a URDF attribute, or one InputError naming it."""
    try:
        values = np.array([float(x) for x in str(text).split()])
    except (ValueError, OverflowError):
        raise InputError(file, field, f"must be {count} number(s), got {text!r}") from None
    if values.size != count or not np.all(np.isfinite(values)):
        raise InputError(file, field, f"must be {count} finite number(s), got {text!r}")
    return values


def build_from_urdf(
    urdf: str,
    *,
    floating: bool | None,
    gravity: Sequence[Any] | None,
    frames: Sequence[Mapping[str, Any]] | None,
    mounts: Mapping[str, Any] | None,
    file: str,
    prefix: str,
):
    """URDF file -> (pinocchio.Model, base, mount specs, mimic joints), the URDF counterpart of
    the project tables' route (:mod:`.table`); arguments as :meth:`Robot.from_urdf`.

    ``file`` and ``prefix`` name where ``floating``, ``gravity``, ``frames`` and ``mounts`` were
    given; errors in the URDF itself name ``urdf``.
    """
    at = f"{prefix}." if prefix else ""
    prepared = read_urdf(urdf)
    if prepared.floating_joint is not None:
        if floating is False:
            raise InputError(
                file,
                f"{at}base",
                f"is 'fixed', but {urdf} declares the floating "
                f'joint {prepared.floating_joint!r}: write base = "floating" or '
                "leave base out",
            )
        floating = True
    try:
        if floating:
            model = pin.buildModelFromXML(prepared.text, pin.JointModelFreeFlyer(), mimic=True)
        else:
            model = pin.buildModelFromXML(prepared.text, mimic=True)
    except (ValueError, RuntimeError) as exc:
        raise InputError(urdf, "urdf", f"not a valid URDF model ({exc})") from None
    g = DEFAULT_GRAVITY if gravity is None else gravity
    model.gravity.linear = _vec3(g, "acceleration", file, f"{at}gravity")
    _add_frames(model, frames or (), file, f"{at}frames")
    specs = {} if mounts is None else _mount_specs(mounts, file, f"{at}mounts")
    base = "floating" if floating else "fixed"
    return model, base, specs, prepared.mimic
