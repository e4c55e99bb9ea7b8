"""Baseline personal minimums on people: ceiling ft, visibility in hundredths of a SM, crosswind kt (all nullable).

Revision ID: 0ae28a74e876
Revises: 23a7302a47fb
Create Date: 2026-12-02 09:15:00.000000+00:00
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op


revision: str = '0ae28a74e876'
down_revision: str | Sequence[str] | None = '23a7302a47fb'
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

CHECKS = (
    ('min_ceiling_range', 'min_ceiling_ft IS NULL OR (min_ceiling_ft >= 0 AND min_ceiling_ft <= 10000)'),
    ('min_visibility_range',
     'min_visibility_hundredths_sm IS NULL OR '
     '(min_visibility_hundredths_sm >= 0 AND min_visibility_hundredths_sm <= 1000)'),
    ('min_crosswind_range', 'min_crosswind_kt IS NULL OR (min_crosswind_kt >= 0 AND min_crosswind_kt <= 50)'),
)


def upgrade() -> None:
    with op.batch_alter_table('people', schema=None) as batch_op:
        batch_op.add_column(sa.Column('min_ceiling_ft', sa.Integer(), nullable=True))
        batch_op.add_column(sa.Column('min_visibility_hundredths_sm', sa.Integer(), nullable=True))
        batch_op.add_column(sa.Column('min_crosswind_kt', sa.Integer(), nullable=True))
        for name, condition in CHECKS:
            batch_op.create_check_constraint(op.f(f'ck_people_{name}'), condition)


def downgrade() -> None:
    with op.batch_alter_table('people', schema=None) as batch_op:
        for name, _condition in reversed(CHECKS):
            batch_op.drop_constraint(op.f(f'ck_people_{name}'), type_='check')
        batch_op.drop_column('min_crosswind_kt')
        batch_op.drop_column('min_visibility_hundredths_sm')
        batch_op.drop_column('min_ceiling_ft')
