"""The API's routes, one module per resource; importing this package registers them all."""

from registry.api.routes import (  # noqa: F401 - imported for their routes
    audit,
    datasets,
    evaluations,
    lineage,
    meta,
    models,
    people,
    schemas,
    stages,
    tokens,
    versions,
)
