"""The catalogue's signing key (Ed25519, RFC 8032) and what it signs: checkpoints of the audit
chain, export manifests and release statements. The key lives in a file outside the database;
only its public half is stored in the catalogue."""
