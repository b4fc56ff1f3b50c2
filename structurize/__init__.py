"""structurize: folders of HR documents into validated, traceable tables.

The public API (the CLI uses nothing else)::

    from structurize import load_schema, extract_folder, extract_document, write_outputs
"""

from .api import ExtractionResult, extract_document, extract_folder
from .errors import ModelMissing, SchemaError, StructurizeError, UsageError
from .options import ExtractOptions
from .schema import FieldSpec, TargetSchema, load_schema
from .score import score_path
from .types import Candidate, DocStatus, DocumentResult, FieldValue, Span, ValueStatus
from .write import write_outputs

from .version import __version__

__all__ = [
    "Candidate",
    "DocStatus",
    "DocumentResult",
    "ExtractOptions",
    "ExtractionResult",
    "FieldSpec",
    "FieldValue",
    "ModelMissing",
    "SchemaError",
    "Span",
    "StructurizeError",
    "TargetSchema",
    "UsageError",
    "ValueStatus",
    "__version__",
    "extract_document",
    "extract_folder",
    "load_schema",
    "score_path",
    "write_outputs",
]
