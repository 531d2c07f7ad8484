"""truss-verify: independent check of claimed truss member forces.

Pipeline (DESIGN.md section 3): ``verify.io`` (read) -> ``verify.model`` (validated, immutable)
-> ``verify.analysis`` (stability, joints, sections, global, stiffness) -> ``verify.compare``
(findings) -> ``verify.report`` (text, JSON, CSV, HTML, Markdown); ``verify.cli`` on top.
"""

__version__ = "0.1.0"
