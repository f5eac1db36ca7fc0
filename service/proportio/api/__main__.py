"""`python -m proportio.api [path]` writes the OpenAPI document (default openapi/openapi.json)."""

from .openapi import main

main()
