"""The API's routes, one module per resource; importing this package registers them all."""

from registry.api.routes import (  # noqa: F401 - imported for their routes
    audit,
    contracts,
    datasets,
    documents,
    evaluations,
    keys,
    lineage,
    meta,
    models,
    people,
    releases,
    schemas,
    serving,
    stages,
    tokens,
    versions,
)
