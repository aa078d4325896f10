"""The study file: document model, codec, JSON Schema, checks, migrations, atomic input/output, data files."""
