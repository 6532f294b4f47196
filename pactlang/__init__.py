"""pactlang: exact stability checks for multi-party sharing agreements.

The pipeline, one module per stage: `parse` (text -> syntax nodes in `ast`),
`resolve` (-> `model.Model`), `worths` (exact worths and payouts), `sweep`
(vectorised search over coalitions), `check` (-> `results`), and the renderers
(`render_text`, `render_json`, `render_sarif`, `format`).
"""

__version__ = "0.1.0"
