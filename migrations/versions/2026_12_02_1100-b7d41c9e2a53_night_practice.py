"""Night practice setting on people: practice under a view-limiting device at night allowed (default false).

Revision ID: b7d41c9e2a53
Revises: 5e875a743417
Create Date: 2026-12-02 10:00:00.000000+00:00
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op


revision: str = 'b7d41c9e2a53'
down_revision: str | Sequence[str] | None = '5e875a743417'
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    # The server default fills the rows already there: everyone stays on daylight-only practice.
    with op.batch_alter_table('people', schema=None) as batch_op:
        batch_op.add_column(sa.Column('night_practice', sa.Boolean(), server_default=sa.false(), nullable=False))


def downgrade() -> None:
    with op.batch_alter_table('people', schema=None) as batch_op:
        batch_op.drop_column('night_practice')
