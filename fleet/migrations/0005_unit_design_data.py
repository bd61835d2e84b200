"""Design data a technician knows: head-pressure control and its set point, the basis of
the design TD and split, a dual voltage rating, and a receiver flag that may be left to the
application default. Existing units keep what they meant: their TD and split stay on the
mid-point, their receiver flags as they were."""

import django.core.validators
from django.db import migrations, models


class Migration(migrations.Migration):
    dependencies = [
        ("fleet", "0004_reading_call_for_cooling"),
    ]

    operations = [
        # Until now the design TD and split were read on the mid-point of a blend's glide:
        # every existing unit keeps that meaning; new units default to the dew point.
        migrations.AddField(
            model_name="unit",
            name="design_temperature_basis",
            field=models.CharField(
                choices=[("dew", "Dew point"), ("mid_point", "Mid-point between dew and bubble")],
                default="mid_point",
                help_text="Which saturation temperature the design evaporator TD and condenser split are given on for a blend with glide; no effect on a refrigerant without glide.",
                max_length=10,
            ),
        ),
        migrations.AlterField(
            model_name="unit",
            name="design_temperature_basis",
            field=models.CharField(
                choices=[("dew", "Dew point"), ("mid_point", "Mid-point between dew and bubble")],
                default="dew",
                help_text="Which saturation temperature the design evaporator TD and condenser split are given on for a blend with glide; no effect on a refrigerant without glide.",
                max_length=10,
            ),
        ),
        migrations.AddField(
            model_name="unit",
            name="head_pressure_control",
            field=models.CharField(
                blank=True,
                choices=[
                    ("none", "None: the head follows the outdoor air"),
                    ("fan_cycling", "Condenser fans switched off and on"),
                    ("flooding", "Condenser backed up with liquid (flooding valve)"),
                    ("variable_speed", "Condenser fan speed varied"),
                    ("other", "Another kind"),
                ],
                default="",
                help_text="How the head is held up in cold weather. Blank: not known, the application default.",
                max_length=20,
            ),
        ),
        migrations.AddField(
            model_name="unit",
            name="head_pressure_setpoint_c",
            field=models.FloatField(
                blank=True,
                help_text="The condensing temperature the head-pressure control holds, degrees C. Blank: the default for its kind.",
                null=True,
                validators=[
                    django.core.validators.MinValueValidator(
                        10,
                        message="must be at least 10 (outside the condensing temperatures a head-pressure control is set to hold)",
                    ),
                    django.core.validators.MaxValueValidator(
                        60,
                        message="must be at most 60 (outside the condensing temperatures a head-pressure control is set to hold)",
                    ),
                ],
            ),
        ),
        migrations.AddField(
            model_name="unit",
            name="nameplate_volts_max",
            field=models.FloatField(
                blank=True,
                help_text="The upper end of a dual rating such as 208-230 V. Blank: a single rating.",
                null=True,
                validators=[
                    django.core.validators.MinValueValidator(
                        90, message="must be at least 90 (outside compressor supply voltages)"
                    ),
                    django.core.validators.MaxValueValidator(
                        700, message="must be at most 700 (outside compressor supply voltages)"
                    ),
                ],
            ),
        ),
        migrations.AlterField(
            model_name="unit",
            name="has_receiver",
            field=models.BooleanField(
                blank=True,
                default=None,
                help_text="Blank: not known, the application default (remote condensing units usually have a receiver; self-contained reach-ins and ice machines usually do not).",
                null=True,
            ),
        ),
        migrations.AlterField(
            model_name="unit",
            name="nameplate_volts",
            field=models.FloatField(
                help_text="The nameplate voltage, or the lower end of a dual rating such as 208-230 V.",
                validators=[
                    django.core.validators.MinValueValidator(
                        90, message="must be at least 90 (outside compressor supply voltages)"
                    ),
                    django.core.validators.MaxValueValidator(
                        700, message="must be at most 700 (outside compressor supply voltages)"
                    ),
                ],
            ),
        ),
        migrations.AddConstraint(
            model_name="unit",
            constraint=models.CheckConstraint(
                condition=models.Q(
                    (
                        "head_pressure_control__in",
                        ["", "none", "fan_cycling", "flooding", "variable_speed", "other"],
                    )
                ),
                name="unit_head_pressure_control_valid",
            ),
        ),
        migrations.AddConstraint(
            model_name="unit",
            constraint=models.CheckConstraint(
                condition=models.Q(
                    models.Q(("head_pressure_control", "none"), _negated=True),
                    ("head_pressure_setpoint_c__isnull", True),
                    _connector="OR",
                ),
                name="unit_no_setpoint_without_control",
            ),
        ),
        migrations.AddConstraint(
            model_name="unit",
            constraint=models.CheckConstraint(
                condition=models.Q(("design_temperature_basis__in", ["dew", "mid_point"])),
                name="unit_temperature_basis_valid",
            ),
        ),
        migrations.AddConstraint(
            model_name="unit",
            constraint=models.CheckConstraint(
                condition=models.Q(
                    ("nameplate_volts_max__isnull", True),
                    ("nameplate_volts_max__gt", models.F("nameplate_volts")),
                    _connector="OR",
                ),
                name="unit_dual_rating_ordered",
            ),
        ),
        migrations.AddConstraint(
            model_name="unit",
            constraint=models.CheckConstraint(
                condition=models.Q(
                    ("nameplate_volts_max__isnull", True),
                    models.Q(("nameplate_volts_max__gte", 90), ("nameplate_volts_max__lte", 700)),
                    _connector="OR",
                ),
                name="unit_nameplate_volts_max_in_range",
            ),
        ),
        migrations.AddConstraint(
            model_name="unit",
            constraint=models.CheckConstraint(
                condition=models.Q(
                    ("head_pressure_setpoint_c__isnull", True),
                    models.Q(
                        ("head_pressure_setpoint_c__gte", 10), ("head_pressure_setpoint_c__lte", 60)
                    ),
                    _connector="OR",
                ),
                name="unit_head_pressure_setpoint_c_in_range",
            ),
        ),
    ]
