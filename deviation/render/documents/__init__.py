"""Builders: each turns a result into the one :class:`~deviation.render.model.Document` that
every writer prints (terminal, xlsx, html, pdf, JSON)."""
