"""Practice sessions (planned, accepted, cancelled, flown) and calendar feed tokens (hashed).

Revision ID: 23a7302a47fb
Revises: 5cfc85de29b0
Create Date: 2026-12-01 23:01:02.385972+00:00
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op


revision: str = '23a7302a47fb'
down_revision: str | Sequence[str] | None = '5cfc85de29b0'
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table('calendar_feed_tokens',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('person_id', sa.Integer(), nullable=False),
    sa.Column('token_hash', sa.String(length=64), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('revoked_at', sa.DateTime(timezone=True), nullable=True),
    sa.ForeignKeyConstraint(['person_id'], ['people.id'], name=op.f('fk_calendar_feed_tokens_person_id_people')),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_calendar_feed_tokens')),
    sa.UniqueConstraint('token_hash', name=op.f('uq_calendar_feed_tokens_token_hash'))
    )
    with op.batch_alter_table('calendar_feed_tokens', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_calendar_feed_tokens_person_id'), ['person_id'], unique=False)

    op.create_table('practice_sessions',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('school_id', sa.Integer(), nullable=False),
    sa.Column('airfield_id', sa.Integer(), nullable=False),
    sa.Column('aircraft_id', sa.Integer(), nullable=False),
    sa.Column('starts_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('ends_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('timezone', sa.String(length=64), nullable=False),
    sa.Column('pilot_flying_id', sa.Integer(), nullable=False),
    sa.Column('safety_pilot_id', sa.Integer(), nullable=False),
    sa.Column('is_mutual', sa.Boolean(), nullable=False),
    sa.Column('status', sa.String(length=16), nullable=False),
    sa.Column('content', sa.JSON(), nullable=False),
    sa.Column('explanation', sa.Text(), nullable=False),
    sa.Column('uid', sa.String(length=128), nullable=False),
    sa.Column('sequence', sa.Integer(), nullable=False),
    sa.Column('version', sa.Integer(), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('updated_at', sa.DateTime(timezone=True), nullable=False),
    sa.CheckConstraint("status IN ('proposed', 'accepted', 'cancelled', 'flown')", name=op.f('ck_practice_sessions_status')),
    sa.CheckConstraint('ends_at > starts_at', name=op.f('ck_practice_sessions_ends_after_start')),
    sa.CheckConstraint('pilot_flying_id <> safety_pilot_id', name=op.f('ck_practice_sessions_two_people')),
    sa.CheckConstraint('sequence >= 0', name=op.f('ck_practice_sessions_sequence_nonneg')),
    sa.CheckConstraint('version >= 1', name=op.f('ck_practice_sessions_version_positive')),
    sa.ForeignKeyConstraint(['aircraft_id'], ['aircraft.id'], name=op.f('fk_practice_sessions_aircraft_id_aircraft')),
    sa.ForeignKeyConstraint(['airfield_id'], ['airfields.id'], name=op.f('fk_practice_sessions_airfield_id_airfields')),
    sa.ForeignKeyConstraint(['pilot_flying_id'], ['people.id'], name=op.f('fk_practice_sessions_pilot_flying_id_people')),
    sa.ForeignKeyConstraint(['safety_pilot_id'], ['people.id'], name=op.f('fk_practice_sessions_safety_pilot_id_people')),
    sa.ForeignKeyConstraint(['school_id'], ['schools.id'], name=op.f('fk_practice_sessions_school_id_schools')),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_practice_sessions')),
    sa.UniqueConstraint('uid', name=op.f('uq_practice_sessions_uid'))
    )
    with op.batch_alter_table('practice_sessions', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_practice_sessions_aircraft_id'), ['aircraft_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_practice_sessions_pilot_flying_id'), ['pilot_flying_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_practice_sessions_safety_pilot_id'), ['safety_pilot_id'], unique=False)
        batch_op.create_index('ix_practice_sessions_school_id_starts_at', ['school_id', 'starts_at'], unique=False)


def downgrade() -> None:
    with op.batch_alter_table('practice_sessions', schema=None) as batch_op:
        batch_op.drop_index('ix_practice_sessions_school_id_starts_at')
        batch_op.drop_index(batch_op.f('ix_practice_sessions_safety_pilot_id'))
        batch_op.drop_index(batch_op.f('ix_practice_sessions_pilot_flying_id'))
        batch_op.drop_index(batch_op.f('ix_practice_sessions_aircraft_id'))

    op.drop_table('practice_sessions')
    with op.batch_alter_table('calendar_feed_tokens', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_calendar_feed_tokens_person_id'))

    op.drop_table('calendar_feed_tokens')
