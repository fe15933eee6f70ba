"""A calibrated h as a scenario overlay: ``extends:`` the plant's scenario, ``changes:`` set it.

The overlay sets ``measured_h`` on the calibrated air setting (an oven
setting, a tunnel zone or a tunnel's transfer stage), clears its
``air_speed`` (a setting takes one or the other), and records where the
value came from in ``measured_h_source``: the log file and the SHA-256 of its
bytes, the date of the run, the product, the fit and its 95 % intervals. A
``plan`` run on the overlay uses the fitted h and names that source in its
report.
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import yaml

from optimizer.probes.calibrate import Calibration
from optimizer.scenario.models import OvenSetting, Scenario, TransferStage, TunnelZone

__all__ = ["AirTarget", "air_target", "overlay_text", "provenance"]


class TargetError(ValueError):
    """The air setting to calibrate is not named rightly (names the option)."""


@dataclass(frozen=True)
class AirTarget:
    """The air setting a calibration belongs to.

    Attributes
    ----------
    path : str
        Dotted path of the setting in the scenario
        (``ovens.rack-oven-1.settings.roast``).
    label : str
        Short name for reports (``rack-oven-1 / roast``).
    spec : OvenSetting or TunnelZone or TransferStage
        The scenario's air description.
    """

    path: str
    label: str
    spec: OvenSetting | TunnelZone | TransferStage


def _names(items: Any) -> str:
    return ", ".join(str(i.name) for i in items) or "none"


def _setting(kind: str, unit: str, settings: Any, name: str | None) -> Any:
    """The setting ``name`` of an oven or tunnel (its only one when None)."""
    if name is None:
        if len(settings) > 1:
            raise TargetError(
                f"--setting: {kind} {unit!r} has {len(settings)} settings; name one: "
                f"{_names(settings)}"
            )
        return settings[0]
    found = next((s for s in settings if s.name == name), None)
    if found is None:
        raise TargetError(
            f"--setting: {kind} {unit!r} has no setting {name!r}; settings: {_names(settings)}"
        )
    return found


def air_target(
    scenario: Scenario,
    *,
    oven: str | None = None,
    tunnel: str | None = None,
    setting: str | None = None,
    zone: str | None = None,
    transfer: bool = False,
) -> AirTarget:
    """Find the air setting named by an oven and setting, or a tunnel and setting and zone.

    Parameters
    ----------
    scenario : Scenario
        The plant's scenario.
    oven, tunnel : str, optional
        Exactly one of them.
    setting : str, optional
        The oven's or tunnel's setting (not with ``transfer``).
    zone : str, optional
        For a tunnel setting: the zone's name or its 1-based position (default
        the only zone).
    transfer : bool
        For a tunnel: its transfer (hot-hold) stage instead of a setting.

    Raises
    ------
    TargetError
        Naming the option and what the scenario has.
    """
    if (oven is None) == (tunnel is None):
        raise TargetError("--oven/--tunnel: name exactly one oven or one tunnel")
    if oven is not None:
        try:
            unit = scenario.oven(oven)
        except KeyError:
            raise TargetError(
                f"--oven: no oven {oven!r}; ovens: {_names(scenario.ovens)}"
            ) from None
        if transfer or zone is not None:
            raise TargetError("--zone/--transfer: only for a tunnel")
        found = _setting("oven", oven, unit.settings, setting)
        return AirTarget(f"ovens.{oven}.settings.{found.name}", f"{oven} / {found.name}", found)
    assert tunnel is not None
    try:
        t = scenario.tunnel(tunnel)
    except KeyError:
        raise TargetError(
            f"--tunnel: no tunnel {tunnel!r}; tunnels: {_names(scenario.tunnels)}"
        ) from None
    if transfer:
        if setting is not None or zone is not None:
            raise TargetError("--transfer: give it without --setting and --zone")
        if t.transfer is None:
            raise TargetError(f"--transfer: tunnel {tunnel!r} has no transfer stage")
        return AirTarget(f"tunnels.{tunnel}.transfer", f"{tunnel} / transfer", t.transfer)
    ts = _setting("tunnel", tunnel, t.settings, setting)
    zones = ts.zones
    if zone is None:
        if len(zones) != 1:
            raise TargetError(
                f"--zone: setting {ts.name!r} has {len(zones)} zones; name one (by name or 1.."
                f"{len(zones)})"
            )
        k = 0
    else:
        named = [i for i, z in enumerate(zones) if z.name == zone]
        if named:
            k = named[0]
        elif zone.isdigit() and 1 <= int(zone) <= len(zones):
            k = int(zone) - 1
        else:
            labels = ", ".join(z.name or str(i + 1) for i, z in enumerate(zones))
            raise TargetError(f"--zone: setting {ts.name!r} has no zone {zone!r}; zones: {labels}")
    z = zones[k]
    key = z.name if z.name is not None else str(k)
    label = f"{tunnel} / {ts.name} / {z.name or f'zone {k + 1}'}"
    return AirTarget(f"tunnels.{tunnel}.settings.{ts.name}.zones.{key}", label, z)


def provenance(fit: Calibration, *, product: str, made: str) -> str:
    """One line for ``measured_h_source``: log, its SHA-256, run date, fit and intervals."""
    h = fit.h
    parts = [
        f"probe-log calibration of {Path(fit.log_path).name} (sha256 {fit.log_sha256})",
        f"run of {fit.started}" if fit.started else "undated run",
        f"product {product}",
        f"{len(fit.probes)} core probe(s), {fit.n_points} readings, rms {fit.rms:.2f} K",
        f"h {h.value:.4g} W/(m² K), 95 % interval {h.low:.4g} to {h.high:.4g} (Jacobian)",
    ]
    if h.boot_low is not None:
        parts.append(f"{h.boot_low:.4g} to {h.boot_high:.4g} (bootstrap over probes)")
    for e in (fit.conductivity_factor, fit.probe_offset):
        if e is not None:
            parts.append(f"{e.name} {e.value:.3g} ({e.low:.3g} to {e.high:.3g})")
    parts.append(f"fitted {made}")
    return "; ".join(parts)


def overlay_text(
    scenario_path: str | os.PathLike[str],
    overlay_path: str | os.PathLike[str],
    target: AirTarget,
    fit: Calibration,
    *,
    product: str,
    made: str,
) -> str:
    """The overlay YAML: extends the scenario, sets the fitted h and its source.

    Parameters
    ----------
    scenario_path : path
        The scenario calibrated against (the overlay extends it, by a path
        relative to the overlay's folder).
    overlay_path : path
        Where the overlay will be written.
    target : AirTarget
        The calibrated air setting.
    fit : Calibration
        The fit.
    product : str
        Product of the trial run.
    made : str
        Date and time of the calibration (ISO), for the record.
    """
    base = os.path.relpath(Path(scenario_path).resolve(), Path(overlay_path).resolve().parent)
    h_text = f"{fit.h.value:.4g} W/m**2/K"
    doc = {
        "extends": Path(base).as_posix(),
        "changes": [
            {"set": f"{target.path}.air_speed", "value": None},
            {"set": f"{target.path}.measured_h", "value": h_text},
            {
                "set": f"{target.path}.measured_h_source",
                "value": provenance(fit, product=product, made=made),
            },
        ],
    }
    head = [
        f"# h calibrated from a probe log for {target.label} (product {product}).",
        f"# 95 % interval {fit.h.low:.4g} to {fit.h.high:.4g} W/(m² K) (Jacobian).",
        "# Every product in this air setting takes this h: calibrate with the largest piece.",
        "# The figures planned from it are model estimates; validate with calibrated probes",
        "# in the thickest pieces and follow the plant's food-safety plan and local codes.",
    ]
    for w in fit.warnings:
        head.append(f"# warning: {w}")
    body = yaml.safe_dump(doc, sort_keys=False, allow_unicode=True, width=100)
    return "\n".join(head) + "\n" + body
