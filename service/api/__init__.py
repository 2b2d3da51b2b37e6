"""The HTTP layer: schemas, views, OpenAPI; it converts and serialises, the engine computes."""
