"""Versioned PDF dossiers of process revisions: charts, rendering, sealing and verification."""
