"""Sign-in throttles: failed sign-ins per (email, client address) with a lockout, shared by all workers.

Revision ID: 5cfc85de29b0
Revises: 6f3a2b8c0d6d
Create Date: 2026-12-01 22:11:24.380453+00:00
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op


revision: str = '5cfc85de29b0'
down_revision: str | Sequence[str] | None = '6f3a2b8c0d6d'
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table('sign_in_throttles',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('email', sa.String(length=254), nullable=False),
    sa.Column('address', sa.String(length=64), nullable=False),
    sa.Column('failures', sa.Integer(), nullable=False),
    sa.Column('window_started_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('locked_until', sa.DateTime(timezone=True), nullable=True),
    sa.CheckConstraint('failures >= 0', name=op.f('ck_sign_in_throttles_failures_nonneg')),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_sign_in_throttles')),
    sa.UniqueConstraint('email', 'address', name=op.f('uq_sign_in_throttles_email_address'))
    )


def downgrade() -> None:
    op.drop_table('sign_in_throttles')
