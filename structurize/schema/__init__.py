"""Target schemas: a Frictionless Table Schema plus ``extract`` hints."""

from .load import load_schema, schema_from_descriptor
from .model import KINDS, FieldHints, FieldSpec, TargetSchema

__all__ = ["KINDS", "FieldHints", "FieldSpec", "TargetSchema", "load_schema", "schema_from_descriptor"]
