"""Exoledger: thermal-safety review records for chemical plants."""
