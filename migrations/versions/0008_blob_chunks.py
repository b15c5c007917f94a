"""Blob bytes move into pieces of at most 1 MiB (blob_chunks), so a large document is read a
piece at a time; every existing blob is cut up in this same transaction.

Revision ID: 0008
Revises: 0007
Create Date: 2026-12-04 18:50:00.000000
"""

from alembic import op
import sqlalchemy as sa


revision = "0008"
down_revision = "0007"
branch_labels = None
depends_on = None

# As registry/store/blob_store.py CHUNK_SIZE; written out so this revision never changes.
CHUNK_SIZE = 1024 * 1024


def upgrade() -> None:
    op.create_table('blob_chunks',
    sa.Column('digest', sa.String(length=64), nullable=False),
    sa.Column('position', sa.BigInteger(), nullable=False),
    sa.Column('content', sa.LargeBinary(), nullable=False),
    sa.ForeignKeyConstraint(['digest'], ['blobs.digest'], ),
    sa.PrimaryKeyConstraint('digest', 'position')
    )
    connection = op.get_bind()
    # A piece at a time (substr counts from 1 on both databases), so no blob is held whole.
    # Blobs and their pieces vouch for themselves (docs/row-coverage.md): no event is needed.
    sizes = connection.execute(sa.text("SELECT digest, size FROM blobs ORDER BY digest")).all()
    for digest, size in sizes:
        for position in range(0, size, CHUNK_SIZE):
            connection.execute(sa.text(
                "INSERT INTO blob_chunks (digest, position, content) "
                "SELECT digest, :position, substr(content, :start, :length) FROM blobs "
                "WHERE digest = :digest"),
                {"position": position, "start": position + 1, "length": CHUNK_SIZE,
                 "digest": digest})
    # Not a batch: SQLite (3.35 and newer) drops the column in place, where copying the table
    # would drop the old one while versions and blob_chunks still refer to it.
    op.drop_column('blobs', 'content')


def downgrade() -> None:
    op.add_column('blobs', sa.Column('content', sa.LargeBinary(), nullable=True))
    connection = op.get_bind()
    blobs = sa.table('blobs', sa.column('digest', sa.String), sa.column('content', sa.LargeBinary))
    digests = connection.execute(sa.text("SELECT digest FROM blobs ORDER BY digest")).scalars()
    for digest in list(digests):
        pieces = connection.execute(sa.text(
            "SELECT content FROM blob_chunks WHERE digest = :digest ORDER BY position"),
            {"digest": digest}).scalars()
        connection.execute(blobs.update().where(blobs.c.digest == digest)
                           .values(content=b"".join(pieces)))
    if connection.dialect.name != "sqlite":
        # SQLite could only do this by copying the table, which rows of versions refer to; there
        # the column stays nullable, holding every blob's bytes all the same.
        op.alter_column('blobs', 'content', existing_type=sa.LargeBinary(), nullable=False)
    op.drop_table('blob_chunks')
