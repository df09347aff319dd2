"""The register's own pages (server-rendered templates under templates/pages/), one module per area.

Each view validates its input, calls one service or selector and renders; who may see a page
and act on a record is decided by the policies of registry.permissions, through ``page``.
"""
