"""The catalogue's storage: tables, opening, unit of work, audit chain and lineage walks."""
