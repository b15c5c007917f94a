"""The catalogue-free schema check: can data written with one schema be read with another?"""

from __future__ import annotations

import json

from registry.api.bodies import json_body, strict_object
from registry.api.rendering import json_response
from registry.api.routing import route
from registry.schema import load, resolution_document, resolve

# Each schema is the Avro schema itself as a JSON value: an object, an array (a union) or a
# string (a primitive or named type), exactly what an .avsc file holds.
SCHEMA_CHECK_BODY = strict_object({"reader": {}, "writer": {}}, ("reader", "writer"))


@route("/schemas/check", "POST", summary="Can data written with `writer` be read with `reader` "
       "(Avro specification, Schema Resolution)?", tag="schemas", body=SCHEMA_CHECK_BODY,
       is_read=True)
def check_schemas():
    body = json_body(SCHEMA_CHECK_BODY)
    reader = load(json.dumps(body["reader"]), source="reader")
    writer = load(json.dumps(body["writer"]), source="writer")
    return json_response(resolution_document(resolve(reader, writer)))
