"""The handover record: the PDF, its embedded machine-readable record, and its signatures."""
