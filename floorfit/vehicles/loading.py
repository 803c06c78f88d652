"""One entry point for any vehicle file: a rigid vehicle, or a train (tractor + cart).

``floorfit check`` and the other commands read vehicle files through :func:`split_vehicle_file`,
which parses the TOML once and hands it to :mod:`floorfit.vehicles.rigid` for the common case
or to :mod:`floorfit.vehicles.train` when the file has a ``[cart]`` table.
"""

from __future__ import annotations

from pathlib import Path

from floorfit.errors import VehicleError
from floorfit.tomlcheck import read_toml
from floorfit.vehicles.rigid import Vehicle, vehicle_from_table
from floorfit.vehicles.train import Train, is_train_file, train_from_table

__all__ = ["split_vehicle_file"]


def split_vehicle_file(path: str | Path, state: str = "default") -> tuple[Vehicle, Train | None]:
    """Read a vehicle or train file: ``(vehicle for the rigid check, Train or None)``.

    A file with a ``[cart]`` table is a train: the rigid check runs with its tractor (a train
    has no loaded state: asking for one is an error). Anything else is a rigid vehicle (``state="loaded"``
    applies its ``[loaded]`` table). Raises :class:`~floorfit.errors.VehicleError` on bad input.
    """
    data = read_toml(path, VehicleError)
    if is_train_file(data):
        if state != "default":
            raise VehicleError(f"a train file has no '{state}' state (give the cart's outline as it is loaded)",
                               str(path), "cart")
        train = train_from_table(data, str(path))
        return train.tractor, train
    return vehicle_from_table(data, str(path), state=state), None
