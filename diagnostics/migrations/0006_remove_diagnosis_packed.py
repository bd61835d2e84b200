# The float32 rows, every one of them turned into a document by 0005.

from django.db import migrations


class Migration(migrations.Migration):
    dependencies = [
        ("diagnostics", "0005_diagnosis_document"),
    ]

    operations = [
        migrations.RemoveField(
            model_name="diagnosis",
            name="packed",
        ),
    ]
