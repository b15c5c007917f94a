"""Signatures the catalogue makes and a serving system checks: the catalogue's Ed25519 key,
DSSE envelopes and the in-toto statements inside them."""
