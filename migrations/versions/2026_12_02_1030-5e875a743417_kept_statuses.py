"""Kept-current status: people.status_revision and one kept_statuses row per pilot (report as JSON + summary).

Existing pilots start at revision 0 with no kept row: the first read or `planner refresh` evaluates them.

Revision ID: 5e875a743417
Revises: 0ae28a74e876
Create Date: 2026-12-02 10:30:00.000000+00:00
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op


revision: str = '5e875a743417'
down_revision: str | Sequence[str] | None = '0ae28a74e876'
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    with op.batch_alter_table('people', schema=None) as batch_op:
        batch_op.add_column(sa.Column('status_revision', sa.Integer(), server_default='0', nullable=False))

    op.create_table(
        'kept_statuses',
        sa.Column('person_id', sa.Integer(), nullable=False),
        sa.Column('as_of', sa.Date(), nullable=False),
        sa.Column('revision', sa.Integer(), nullable=False),
        sa.Column('rules_digest', sa.String(length=16), nullable=False),
        sa.Column('worst_state', sa.String(length=8), nullable=True),
        sa.Column('soonest', sa.Date(), nullable=True),
        sa.Column('next_deadline', sa.Date(), nullable=True),
        sa.Column('practice_due', sa.Integer(), nullable=False),
        sa.Column('report', sa.JSON(), nullable=False),
        sa.CheckConstraint(
            "worst_state IS NULL OR worst_state IN ('current', 'grace', 'lapsed')",
            name=op.f('ck_kept_statuses_worst_state'),
        ),
        sa.CheckConstraint('practice_due >= 0', name=op.f('ck_kept_statuses_practice_due_nonneg')),
        sa.CheckConstraint('revision >= 0', name=op.f('ck_kept_statuses_revision_nonneg')),
        sa.ForeignKeyConstraint(
            ['person_id'], ['people.id'], name=op.f('fk_kept_statuses_person_id_people'), ondelete='CASCADE'
        ),
        sa.PrimaryKeyConstraint('person_id', name=op.f('pk_kept_statuses')),
    )
    with op.batch_alter_table('kept_statuses', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_kept_statuses_as_of'), ['as_of'], unique=False)


def downgrade() -> None:
    with op.batch_alter_table('kept_statuses', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_kept_statuses_as_of'))
    op.drop_table('kept_statuses')

    with op.batch_alter_table('people', schema=None) as batch_op:
        batch_op.drop_column('status_revision')
