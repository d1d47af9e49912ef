"""Presentation shared by every family: the Document, table renderers, writers and figures."""
