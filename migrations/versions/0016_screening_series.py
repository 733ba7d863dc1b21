"""Screening series for an oil phase's required HLB: the series, its blends, the lab's
observations, and the in-house required HLB fitted to it.

Revision ID: 0016_screening_series
Revises: 0015_ingredient_prices
Created: 2026-12-04
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0016_screening_series"
down_revision: str | None = '0015_ingredient_prices'
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table('screening_series',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('name', sa.String(length=200), nullable=False),
    sa.Column('name_key', sa.String(length=200), nullable=False),
    sa.Column('emulsion_type', sa.String(length=3), nullable=False),
    sa.Column('oil_phase', sa.Text(), nullable=False),
    sa.Column('oil_percent', sa.Float(), nullable=False),
    sa.Column('emulsifier_percent', sa.Float(), nullable=False),
    sa.Column('low_inci', sa.String(length=200), nullable=False),
    sa.Column('high_inci', sa.String(length=200), nullable=False),
    sa.Column('low_hlb', sa.Float(), nullable=False),
    sa.Column('high_hlb', sa.Float(), nullable=False),
    sa.Column('water_inci', sa.String(length=200), nullable=False),
    sa.Column('batch_g', sa.Float(), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('created_by', sa.String(length=100), nullable=False),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_screening_series')),
    sa.UniqueConstraint('name_key', name=op.f('uq_screening_series_name_key'))
    )
    op.create_table('oil_phase_measurements',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('series_id', sa.Integer(), nullable=False),
    sa.Column('emulsion_type', sa.String(length=3), nullable=False),
    sa.Column('oil_phase', sa.Text(), nullable=False),
    sa.Column('required_hlb', sa.Float(), nullable=False),
    sa.Column('uncertainty', sa.Float(), nullable=False),
    sa.Column('measure', sa.String(length=40), nullable=False),
    sa.Column('method', sa.Text(), nullable=False),
    sa.Column('source_key', sa.String(length=80), nullable=False),
    sa.Column('measured_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('measured_by', sa.String(length=100), nullable=False),
    sa.ForeignKeyConstraint(['series_id'], ['screening_series.id'], name=op.f('fk_oil_phase_measurements_series_id_screening_series')),
    sa.ForeignKeyConstraint(['source_key'], ['sources.key'], name=op.f('fk_oil_phase_measurements_source_key_sources')),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_oil_phase_measurements'))
    )
    with op.batch_alter_table('oil_phase_measurements', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_oil_phase_measurements_series_id'), ['series_id'], unique=False)

    op.create_table('screening_blends',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('series_id', sa.Integer(), nullable=False),
    sa.Column('number', sa.Integer(), nullable=False),
    sa.Column('hlb', sa.Float(), nullable=False),
    sa.Column('low_percent', sa.Float(), nullable=False),
    sa.Column('high_percent', sa.Float(), nullable=False),
    sa.ForeignKeyConstraint(['series_id'], ['screening_series.id'], name=op.f('fk_screening_blends_series_id_screening_series'), ondelete='CASCADE'),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_screening_blends')),
    sa.UniqueConstraint('series_id', 'number', name=op.f('uq_screening_blends_series_id'))
    )
    with op.batch_alter_table('screening_blends', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_screening_blends_series_id'), ['series_id'], unique=False)

    op.create_table('screening_observations',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('blend_id', sa.Integer(), nullable=False),
    sa.Column('measure', sa.String(length=40), nullable=False),
    sa.Column('value', sa.Float(), nullable=False),
    sa.Column('after_hours', sa.Float(), nullable=True),
    sa.Column('observed_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('observed_by', sa.String(length=100), nullable=False),
    sa.Column('note', sa.Text(), nullable=True),
    sa.ForeignKeyConstraint(['blend_id'], ['screening_blends.id'], name=op.f('fk_screening_observations_blend_id_screening_blends'), ondelete='CASCADE'),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_screening_observations'))
    )
    with op.batch_alter_table('screening_observations', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_screening_observations_blend_id'), ['blend_id'], unique=False)



def downgrade() -> None:
    with op.batch_alter_table('screening_observations', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_screening_observations_blend_id'))

    op.drop_table('screening_observations')
    with op.batch_alter_table('screening_blends', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_screening_blends_series_id'))

    op.drop_table('screening_blends')
    with op.batch_alter_table('oil_phase_measurements', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_oil_phase_measurements_series_id'))

    op.drop_table('oil_phase_measurements')
    op.drop_table('screening_series')
