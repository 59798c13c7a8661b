"""The HTTP layer: strict body reading, schemas, problem details, routes, OpenAPI."""
