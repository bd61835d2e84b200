"""Dew and bubble points of a refrigerant, as ``GET /api/v1/refrigerants/{r}/saturation/``."""

from __future__ import annotations

import json
from typing import Any

from django.core.management.base import BaseCommand, CommandError, CommandParser

from diagnostics import lookups as sat
from diagnostics.core import units
from diagnostics.core.refrigerants import UnknownRefrigerant

#: Pressures given in psi are answered in F; the rest in C (and the same the other way).
US_PRESSURES = {"psig", "psia"}


class Command(BaseCommand):
    help = (
        "Dew and bubble temperatures of a refrigerant at a pressure (gauge pressures made "
        "absolute at --elevation-m), or dew and bubble pressures at a temperature."
    )

    def add_arguments(self, parser: CommandParser) -> None:
        parser.add_argument("refrigerant", help="e.g. R-404A, r404a, R448A")
        given = parser.add_mutually_exclusive_group(required=True)
        given.add_argument("--pressure", type=float, help="a pressure reading")
        given.add_argument("--temperature", type=float, help="a saturation temperature")
        parser.add_argument("--pressure-unit", choices=units.PRESSURE_UNITS)
        parser.add_argument("--temperature-unit", choices=units.TEMPERATURE_UNITS)
        parser.add_argument(
            "--elevation-m",
            type=float,
            default=0.0,
            help="site elevation in metres for gauge pressures (default 0, sea level)",
        )
        parser.add_argument("--json", action="store_true", help="print one JSON object")

    def handle(self, *args: Any, **options: Any) -> None:
        try:
            if options["pressure"] is not None:
                self._at_pressure(options)
            else:
                self._at_temperature(options)
        except UnknownRefrigerant as exc:
            raise CommandError(str(exc)) from exc
        except sat.SaturationInputError as exc:
            raise CommandError(f"--{exc.field}: {exc}") from exc

    def _at_pressure(self, options: dict) -> None:
        unit = options["pressure_unit"]
        if unit is None:
            raise CommandError("--pressure needs --pressure-unit")
        elevation_m = options["elevation_m"]
        if not -500 <= elevation_m <= 5000:
            raise CommandError("--elevation-m must be between -500 and 5000 m")
        point = sat.at_pressure(options["refrigerant"], options["pressure"], unit, elevation_m)
        if options["json"]:
            self._print_json(
                refrigerant=point.refrigerant,
                absolute_pressure_kpa=point.absolute_pressure_kpa,
                dew_temperature_c=point.dew_temperature_c,
                bubble_temperature_c=point.bubble_temperature_c,
            )
            return
        t_unit = "F" if unit in US_PRESSURES else "C"
        d_unit = "F" if t_unit == "F" else "K"

        def shown(c: float) -> str:
            return f"{units.temperature_from_c(c, t_unit):.1f} {t_unit}"

        glide = units.temperature_difference_from_k(point.glide_k, d_unit)
        self.stdout.write(
            f"{point.refrigerant} at {options['pressure']:g} {unit} ({elevation_m:g} m): "
            f"{point.absolute_pressure_kpa:.2f} kPa absolute\n"
            f"  dew    {shown(point.dew_temperature_c)}\n"
            f"  bubble {shown(point.bubble_temperature_c)}\n"
            f"  glide  {glide:.1f} {d_unit}"
        )

    def _at_temperature(self, options: dict) -> None:
        unit = options["temperature_unit"]
        if unit is None:
            raise CommandError("--temperature needs --temperature-unit")
        at_t = sat.at_temperature(options["refrigerant"], options["temperature"], unit)
        if options["json"]:
            self._print_json(
                refrigerant=at_t.refrigerant,
                dew_pressure_kpa_abs=at_t.dew_pressure_kpa_abs,
                bubble_pressure_kpa_abs=at_t.bubble_pressure_kpa_abs,
            )
            return
        p_unit = "psig" if unit == "F" else "kPa"

        def shown(kpa_abs: float) -> str:
            gauge = units.pressure_from_kpa_abs(kpa_abs, p_unit, 0.0)
            return f"{kpa_abs:.2f} kPa absolute ({gauge:.1f} {p_unit} at sea level)"

        self.stdout.write(
            f"{at_t.refrigerant} at {options['temperature']:g} {unit}:\n"
            f"  dew    {shown(at_t.dew_pressure_kpa_abs)}\n"
            f"  bubble {shown(at_t.bubble_pressure_kpa_abs)}"
        )

    def _print_json(self, **values: object) -> None:
        self.stdout.write(json.dumps(values))
