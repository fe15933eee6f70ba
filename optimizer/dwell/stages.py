"""Scenario tunnels -> :mod:`thermal.process` stages (transfer and tunnel zones).

Apart from :mod:`optimizer.dwell.convert` because :mod:`thermal.process` loads
the numba-compiled solver: the physics checks of ``corepace validate`` use
the light conversions only.
"""

from __future__ import annotations

from optimizer.dwell.convert import air_setting
from optimizer.scenario.models import TransferStage, Tunnel, TunnelSetting
from optimizer.scenario.units import minutes_to_seconds
from thermal.process import TransferStage as ThermalTransfer
from thermal.process import TunnelZone as ThermalZone

__all__ = ["hold_waits", "transfer_stage", "tunnel_zones"]


def hold_waits(tunnel: Tunnel) -> list[float]:
    """Waits between oven and belt to check [min]: the transfer and the hot-hold limit."""
    if tunnel.transfer is None:
        return [0.0]
    waits = [tunnel.transfer.duration]
    if tunnel.hot_hold_max is not None and tunnel.hot_hold_max > tunnel.transfer.duration:
        waits.append(tunnel.hot_hold_max)
    return waits


def tunnel_zones(
    tunnel: Tunnel, setting: TunnelSetting, loading_factor: float
) -> list[ThermalZone]:
    """The :class:`thermal.process.TunnelZone` list of a tunnel setting, in belt order."""
    return [
        ThermalZone(air_setting(z), share, loading_factor)
        for z, share in zip(setting.zones, tunnel.zone_fractions(setting), strict=True)
    ]


def transfer_stage(spec: TransferStage | None, minutes: float | None) -> ThermalTransfer | None:
    """The transfer (hot-hold) stage of ``minutes`` [min] in ``spec``'s air; None when none."""
    if spec is None or not minutes:
        return None
    return ThermalTransfer(air_setting(spec), minutes_to_seconds(minutes))
