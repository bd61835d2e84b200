"""Capacitors as printed on the can: a run capacitor's microfarads plus or minus a tolerance
beside the range a start capacitor is marked with. A part given that way keeps its band in
the range columns too. Existing run capacitors recorded with a single value (no range, or
both ends equal) were judged as that value +/- the typical 6 % by the diagnosis: they become
that printed rating, with its band."""

import django.core.validators
import django.db.models.expressions
import django.db.models.functions.comparison
from django.db import migrations, models

#: The typical run-capacitor tolerance when this migration was written
#: (diagnostics.core.electrical.DEFAULT_RUN_CAPACITOR_TOLERANCE_PCT); frozen here.
TYPICAL_TOLERANCE_PCT = 6.0


def single_values_to_ratings(apps, schema_editor):
    Component = apps.get_model("fleet", "Component")
    single = Component.objects.filter(kind="run_capacitor", rating_uf_min__isnull=False).filter(
        models.Q(rating_uf_max__isnull=True) | models.Q(rating_uf_max=models.F("rating_uf_min"))
    )
    for part in single:
        rated = part.rating_uf_min
        part.rated_uf = rated
        part.rating_uf_min = rated * (1 - TYPICAL_TOLERANCE_PCT / 100)
        part.rating_uf_max = rated * (1 + TYPICAL_TOLERANCE_PCT / 100)
        part.save(update_fields=["rated_uf", "rating_uf_min", "rating_uf_max"])


def ratings_to_single_values(apps, schema_editor):
    Component = apps.get_model("fleet", "Component")
    for part in Component.objects.filter(rated_uf__isnull=False, tolerance_pct__isnull=True):
        part.rating_uf_min = part.rating_uf_max = part.rated_uf
        part.save(update_fields=["rating_uf_min", "rating_uf_max"])


class Migration(migrations.Migration):
    dependencies = [
        ("fleet", "0005_unit_design_data"),
    ]

    operations = [
        migrations.AddField(
            model_name="component",
            name="rated_uf",
            field=models.FloatField(
                blank=True,
                help_text="Capacitors marked with a nominal value (run capacitors): the microfarads printed on the can. Give this or the range, not both.",
                null=True,
                validators=[
                    django.core.validators.MinValueValidator(
                        0.1,
                        message="must be at least 0.1 (a capacitor is marked with a few to a couple of thousand uF)",
                    ),
                    django.core.validators.MaxValueValidator(
                        2000,
                        message="must be at most 2000 (a capacitor is marked with a few to a couple of thousand uF)",
                    ),
                ],
            ),
        ),
        migrations.AddField(
            model_name="component",
            name="tolerance_pct",
            field=models.FloatField(
                blank=True,
                help_text="The plus-or-minus percent printed beside rated_uf. Blank on a run capacitor: the typical 6 %.",
                null=True,
                validators=[
                    django.core.validators.MinValueValidator(
                        0.5,
                        message="must be at least 0.5 (a printed tolerance is a few percent (commonly 5, 6 or 10 %))",
                    ),
                    django.core.validators.MaxValueValidator(
                        30,
                        message="must be at most 30 (a printed tolerance is a few percent (commonly 5, 6 or 10 %))",
                    ),
                ],
            ),
        ),
        migrations.AlterField(
            model_name="component",
            name="rating_uf_max",
            field=models.FloatField(
                blank=True,
                help_text="Capacitors marked with a range: the upper end. For a part given by rated_uf, the upper end of its band, filled in from it.",
                null=True,
            ),
        ),
        migrations.AlterField(
            model_name="component",
            name="rating_uf_min",
            field=models.FloatField(
                blank=True,
                help_text="Capacitors marked with a range (start capacitors): the lower end. For a part given by rated_uf, the lower end of its band, filled in from it.",
                null=True,
            ),
        ),
        migrations.RunPython(single_values_to_ratings, ratings_to_single_values),
        migrations.AddConstraint(
            model_name="component",
            constraint=models.CheckConstraint(
                condition=models.Q(
                    ("tolerance_pct__isnull", True), ("rated_uf__isnull", False), _connector="OR"
                ),
                name="component_tolerance_needs_rating",
            ),
        ),
        migrations.AddConstraint(
            model_name="component",
            constraint=models.CheckConstraint(
                condition=models.Q(
                    ("rated_uf__isnull", True),
                    ("tolerance_pct__isnull", False),
                    ("kind", "run_capacitor"),
                    _connector="OR",
                ),
                name="component_default_tolerance_only_for_run",
            ),
        ),
        migrations.AddConstraint(
            model_name="component",
            constraint=models.CheckConstraint(
                condition=models.Q(
                    ("rated_uf__isnull", True),
                    models.Q(
                        (
                            "rating_uf_max__gte",
                            django.db.models.expressions.CombinedExpression(
                                django.db.models.expressions.CombinedExpression(
                                    models.F("rated_uf"),
                                    "*",
                                    django.db.models.expressions.CombinedExpression(
                                        models.Value(1.0),
                                        "+",
                                        django.db.models.expressions.CombinedExpression(
                                            django.db.models.functions.comparison.Coalesce(
                                                "tolerance_pct", models.Value(6.0)
                                            ),
                                            "/",
                                            models.Value(100.0),
                                        ),
                                    ),
                                ),
                                "-",
                                django.db.models.expressions.CombinedExpression(
                                    models.F("rated_uf"), "*", models.Value(1e-09)
                                ),
                            ),
                        ),
                        (
                            "rating_uf_max__lte",
                            django.db.models.expressions.CombinedExpression(
                                django.db.models.expressions.CombinedExpression(
                                    models.F("rated_uf"),
                                    "*",
                                    django.db.models.expressions.CombinedExpression(
                                        models.Value(1.0),
                                        "+",
                                        django.db.models.expressions.CombinedExpression(
                                            django.db.models.functions.comparison.Coalesce(
                                                "tolerance_pct", models.Value(6.0)
                                            ),
                                            "/",
                                            models.Value(100.0),
                                        ),
                                    ),
                                ),
                                "+",
                                django.db.models.expressions.CombinedExpression(
                                    models.F("rated_uf"), "*", models.Value(1e-09)
                                ),
                            ),
                        ),
                        (
                            "rating_uf_min__gte",
                            django.db.models.expressions.CombinedExpression(
                                django.db.models.expressions.CombinedExpression(
                                    models.F("rated_uf"),
                                    "*",
                                    django.db.models.expressions.CombinedExpression(
                                        models.Value(1.0),
                                        "-",
                                        django.db.models.expressions.CombinedExpression(
                                            django.db.models.functions.comparison.Coalesce(
                                                "tolerance_pct", models.Value(6.0)
                                            ),
                                            "/",
                                            models.Value(100.0),
                                        ),
                                    ),
                                ),
                                "-",
                                django.db.models.expressions.CombinedExpression(
                                    models.F("rated_uf"), "*", models.Value(1e-09)
                                ),
                            ),
                        ),
                        (
                            "rating_uf_min__lte",
                            django.db.models.expressions.CombinedExpression(
                                django.db.models.expressions.CombinedExpression(
                                    models.F("rated_uf"),
                                    "*",
                                    django.db.models.expressions.CombinedExpression(
                                        models.Value(1.0),
                                        "-",
                                        django.db.models.expressions.CombinedExpression(
                                            django.db.models.functions.comparison.Coalesce(
                                                "tolerance_pct", models.Value(6.0)
                                            ),
                                            "/",
                                            models.Value(100.0),
                                        ),
                                    ),
                                ),
                                "+",
                                django.db.models.expressions.CombinedExpression(
                                    models.F("rated_uf"), "*", models.Value(1e-09)
                                ),
                            ),
                        ),
                    ),
                    _connector="OR",
                ),
                name="component_band_follows_rating",
            ),
        ),
        migrations.AddConstraint(
            model_name="component",
            constraint=models.CheckConstraint(
                condition=models.Q(
                    ("rated_uf__isnull", True),
                    models.Q(("rated_uf__gte", 0.1), ("rated_uf__lte", 2000)),
                    _connector="OR",
                ),
                name="component_rated_uf_in_range",
            ),
        ),
        migrations.AddConstraint(
            model_name="component",
            constraint=models.CheckConstraint(
                condition=models.Q(
                    ("tolerance_pct__isnull", True),
                    models.Q(("tolerance_pct__gte", 0.5), ("tolerance_pct__lte", 30)),
                    _connector="OR",
                ),
                name="component_tolerance_pct_in_range",
            ),
        ),
    ]
