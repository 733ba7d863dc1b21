"""Regulatory list snapshots: imported annex exports, their structured entries, the index that
matches ingredients to entries, and the ingredient records the lists created.

Revision ID: 0013_list_snapshots
Revises: 0012_seal_audit_rows
Created: 2026-12-04
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = '0013_list_snapshots'
down_revision: str | None = '0012_seal_audit_rows'
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table('list_snapshots',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('jurisdiction', sa.String(length=20), nullable=False),
    sa.Column('annex', sa.String(length=10), nullable=False),
    sa.Column('file_name', sa.String(length=300), nullable=False),
    sa.Column('file_created', sa.Date(), nullable=False),
    sa.Column('last_update', sa.Date(), nullable=False),
    sa.Column('file_hash', sa.String(length=64), nullable=False),
    sa.Column('entry_count', sa.Integer(), nullable=False),
    sa.Column('imported_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('imported_by', sa.String(length=100), nullable=False),
    sa.Column('in_force', sa.Boolean(), nullable=False),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_list_snapshots'))
    )
    with op.batch_alter_table('list_snapshots', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_list_snapshots_in_force'), ['in_force'], unique=False)

    op.create_table('list_entries',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('snapshot_id', sa.Integer(), nullable=False),
    sa.Column('key', sa.String(length=300), nullable=False),
    sa.Column('ref', sa.String(length=40), nullable=False),
    sa.Column('names', sa.Text(), nullable=False),
    sa.Column('body', sa.Text(), nullable=False),
    sa.ForeignKeyConstraint(['snapshot_id'], ['list_snapshots.id'], name=op.f('fk_list_entries_snapshot_id_list_snapshots'), ondelete='CASCADE'),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_list_entries')),
    sa.UniqueConstraint('snapshot_id', 'key', name=op.f('uq_list_entries_snapshot_id'))
    )
    with op.batch_alter_table('list_entries', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_list_entries_snapshot_id'), ['snapshot_id'], unique=False)

    op.create_table('list_ingredients',
    sa.Column('ingredient_id', sa.Integer(), nullable=False),
    sa.Column('jurisdiction', sa.String(length=20), nullable=False),
    sa.Column('annex', sa.String(length=10), nullable=False),
    sa.Column('entry_key', sa.String(length=300), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.ForeignKeyConstraint(['ingredient_id'], ['ingredients.id'], name=op.f('fk_list_ingredients_ingredient_id_ingredients'), ondelete='CASCADE'),
    sa.PrimaryKeyConstraint('ingredient_id', name=op.f('pk_list_ingredients'))
    )
    op.create_table('list_entry_matches',
    sa.Column('entry_id', sa.Integer(), nullable=False),
    sa.Column('match_key', sa.String(length=250), nullable=False),
    sa.ForeignKeyConstraint(['entry_id'], ['list_entries.id'], name=op.f('fk_list_entry_matches_entry_id_list_entries'), ondelete='CASCADE'),
    sa.PrimaryKeyConstraint('entry_id', 'match_key', name=op.f('pk_list_entry_matches'))
    )
    with op.batch_alter_table('list_entry_matches', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_list_entry_matches_match_key'), ['match_key'], unique=False)



def downgrade() -> None:
    with op.batch_alter_table('list_entry_matches', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_list_entry_matches_match_key'))

    op.drop_table('list_entry_matches')
    op.drop_table('list_ingredients')
    with op.batch_alter_table('list_entries', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_list_entries_snapshot_id'))

    op.drop_table('list_entries')
    with op.batch_alter_table('list_snapshots', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_list_snapshots_in_force'))

    op.drop_table('list_snapshots')
