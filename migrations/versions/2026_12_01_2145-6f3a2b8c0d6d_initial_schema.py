"""Initial schema: schools, airfields, people, aircraft, training devices, logbook entries
with approaches, checks and revision history, availability windows.

Revision ID: 6f3a2b8c0d6d
Revises: 
Create Date: 2026-12-01 21:45:26.371912+00:00
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op


revision: str = '6f3a2b8c0d6d'
down_revision: str | Sequence[str] | None = None
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table('airfields',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('ident', sa.String(length=16), nullable=False),
    sa.Column('name', sa.String(length=200), nullable=False),
    sa.Column('latitude', sa.Float(), nullable=False),
    sa.Column('longitude', sa.Float(), nullable=False),
    sa.Column('elevation_ft', sa.Integer(), nullable=False),
    sa.Column('timezone', sa.String(length=64), nullable=False),
    sa.CheckConstraint('latitude >= -90 AND latitude <= 90', name=op.f('ck_airfields_latitude_range')),
    sa.CheckConstraint('longitude >= -180 AND longitude <= 180', name=op.f('ck_airfields_longitude_range')),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_airfields')),
    sa.UniqueConstraint('ident', name=op.f('uq_airfields_ident'))
    )
    op.create_table('schools',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('slug', sa.String(length=64), nullable=False),
    sa.Column('name', sa.String(length=200), nullable=False),
    sa.Column('home_airfield_id', sa.Integer(), nullable=True),
    sa.ForeignKeyConstraint(['home_airfield_id'], ['airfields.id'], name=op.f('fk_schools_home_airfield_id_airfields')),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_schools')),
    sa.UniqueConstraint('slug', name=op.f('uq_schools_slug'))
    )
    op.create_table('aircraft',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('school_id', sa.Integer(), nullable=True),
    sa.Column('registration', sa.String(length=16), nullable=False),
    sa.Column('category', sa.String(length=16), nullable=False),
    sa.Column('aircraft_class', sa.String(length=32), nullable=True),
    sa.Column('dual_controls', sa.Boolean(), nullable=False),
    sa.Column('equipment_notes', sa.Text(), nullable=False),
    sa.Column('home_airfield_id', sa.Integer(), nullable=True),
    sa.CheckConstraint("category IN ('airplane', 'rotorcraft', 'powered-lift', 'airship', 'glider')", name=op.f('ck_aircraft_category')),
    sa.ForeignKeyConstraint(['home_airfield_id'], ['airfields.id'], name=op.f('fk_aircraft_home_airfield_id_airfields')),
    sa.ForeignKeyConstraint(['school_id'], ['schools.id'], name=op.f('fk_aircraft_school_id_schools')),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_aircraft')),
    sa.UniqueConstraint('registration', name=op.f('uq_aircraft_registration'))
    )
    op.create_index(op.f('ix_aircraft_school_id'), 'aircraft', ['school_id'], unique=False)
    op.create_table('people',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('school_id', sa.Integer(), nullable=True),
    sa.Column('name', sa.String(length=200), nullable=False),
    sa.Column('email', sa.String(length=254), nullable=True),
    sa.Column('password_hash', sa.String(length=255), nullable=True),
    sa.Column('is_pilot', sa.Boolean(), nullable=False),
    sa.Column('is_instructor', sa.Boolean(), nullable=False),
    sa.Column('is_admin', sa.Boolean(), nullable=False),
    sa.Column('certificate_level', sa.String(length=16), nullable=False),
    sa.Column('category_classes', sa.JSON(), nullable=False),
    sa.Column('instrument_categories', sa.JSON(), nullable=False),
    sa.Column('instructor_ratings', sa.JSON(), nullable=False),
    sa.Column('medical_class', sa.String(length=8), nullable=True),
    sa.Column('medical_expires', sa.Date(), nullable=True),
    sa.Column('basicmed_expires', sa.Date(), nullable=True),
    sa.Column('home_airfield_id', sa.Integer(), nullable=True),
    sa.Column('timezone', sa.String(length=64), nullable=True),
    sa.Column('rule_sets', sa.JSON(), nullable=False),
    sa.Column('practice_targets', sa.JSON(), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.CheckConstraint("certificate_level IN ('none', 'student', 'sport', 'recreational', 'private', 'commercial', 'atp')", name=op.f('ck_people_certificate_level')),
    sa.CheckConstraint("medical_class IS NULL OR medical_class IN ('first', 'second', 'third')", name=op.f('ck_people_medical_class')),
    sa.ForeignKeyConstraint(['home_airfield_id'], ['airfields.id'], name=op.f('fk_people_home_airfield_id_airfields')),
    sa.ForeignKeyConstraint(['school_id'], ['schools.id'], name=op.f('fk_people_school_id_schools')),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_people')),
    sa.UniqueConstraint('email', name=op.f('uq_people_email'))
    )
    op.create_index(op.f('ix_people_school_id'), 'people', ['school_id'], unique=False)
    op.create_table('training_devices',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('school_id', sa.Integer(), nullable=True),
    sa.Column('identifier', sa.String(length=32), nullable=False),
    sa.Column('kind', sa.String(length=8), nullable=False),
    sa.Column('category', sa.String(length=16), nullable=False),
    sa.Column('authorisation_expires', sa.Date(), nullable=True),
    sa.Column('notes', sa.Text(), nullable=False),
    sa.CheckConstraint("category IN ('airplane', 'rotorcraft', 'powered-lift', 'airship', 'glider')", name=op.f('ck_training_devices_category')),
    sa.CheckConstraint("kind IN ('ffs', 'ftd', 'atd')", name=op.f('ck_training_devices_kind')),
    sa.ForeignKeyConstraint(['school_id'], ['schools.id'], name=op.f('fk_training_devices_school_id_schools')),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_training_devices')),
    sa.UniqueConstraint('identifier', name=op.f('uq_training_devices_identifier'))
    )
    op.create_index(op.f('ix_training_devices_school_id'), 'training_devices', ['school_id'], unique=False)
    op.create_table('availability_windows',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('person_id', sa.Integer(), nullable=True),
    sa.Column('aircraft_id', sa.Integer(), nullable=True),
    sa.Column('device_id', sa.Integer(), nullable=True),
    sa.Column('starts_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('ends_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('timezone', sa.String(length=64), nullable=False),
    sa.Column('note', sa.Text(), nullable=False),
    sa.CheckConstraint('(person_id IS NOT NULL AND aircraft_id IS NULL AND device_id IS NULL) OR (person_id IS NULL AND aircraft_id IS NOT NULL AND device_id IS NULL) OR (person_id IS NULL AND aircraft_id IS NULL AND device_id IS NOT NULL)', name=op.f('ck_availability_windows_exactly_one_subject')),
    sa.CheckConstraint('ends_at > starts_at', name=op.f('ck_availability_windows_ends_after_start')),
    sa.ForeignKeyConstraint(['aircraft_id'], ['aircraft.id'], name=op.f('fk_availability_windows_aircraft_id_aircraft')),
    sa.ForeignKeyConstraint(['device_id'], ['training_devices.id'], name=op.f('fk_availability_windows_device_id_training_devices')),
    sa.ForeignKeyConstraint(['person_id'], ['people.id'], name=op.f('fk_availability_windows_person_id_people')),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_availability_windows'))
    )
    op.create_index(op.f('ix_availability_windows_aircraft_id'), 'availability_windows', ['aircraft_id'], unique=False)
    op.create_index(op.f('ix_availability_windows_device_id'), 'availability_windows', ['device_id'], unique=False)
    op.create_index(op.f('ix_availability_windows_person_id'), 'availability_windows', ['person_id'], unique=False)
    op.create_table('entries',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('pilot_id', sa.Integer(), nullable=False),
    sa.Column('external_id', sa.String(length=64), nullable=False),
    sa.Column('date', sa.Date(), nullable=False),
    sa.Column('device', sa.String(length=16), nullable=False),
    sa.Column('category', sa.String(length=16), nullable=False),
    sa.Column('aircraft_class', sa.String(length=32), nullable=True),
    sa.Column('conditions', sa.String(length=16), nullable=True),
    sa.Column('unlogged_approaches', sa.Integer(), nullable=False),
    sa.Column('holds', sa.Integer(), nullable=False),
    sa.Column('course_tracking', sa.Boolean(), nullable=False),
    sa.Column('instrument_actual_hundredths', sa.Integer(), nullable=False),
    sa.Column('instrument_simulated_hundredths', sa.Integer(), nullable=False),
    sa.Column('landings', sa.Integer(), nullable=False),
    sa.Column('night_full_stop_landings', sa.Integer(), nullable=False),
    sa.Column('partial_panel_approaches', sa.Integer(), nullable=False),
    sa.Column('ua_nose_high', sa.Integer(), nullable=False),
    sa.Column('ua_nose_low', sa.Integer(), nullable=False),
    sa.Column('safety_pilot_name', sa.String(length=200), nullable=True),
    sa.Column('safety_pilot_id', sa.Integer(), nullable=True),
    sa.Column('instructor_name', sa.String(length=200), nullable=True),
    sa.Column('instructor_id', sa.Integer(), nullable=True),
    sa.Column('remarks', sa.Text(), nullable=False),
    sa.Column('aircraft_ident', sa.String(length=64), nullable=True),
    sa.Column('aircraft_id', sa.Integer(), nullable=True),
    sa.Column('device_id', sa.Integer(), nullable=True),
    sa.Column('route', sa.String(length=200), nullable=True),
    sa.Column('start_time', sa.String(length=5), nullable=True),
    sa.Column('end_time', sa.String(length=5), nullable=True),
    sa.Column('total_hundredths', sa.Integer(), nullable=False),
    sa.Column('pic_hundredths', sa.Integer(), nullable=False),
    sa.Column('dual_received_hundredths', sa.Integer(), nullable=False),
    sa.Column('solo_hundredths', sa.Integer(), nullable=False),
    sa.Column('version', sa.Integer(), nullable=False),
    sa.Column('deleted_at', sa.DateTime(timezone=True), nullable=True),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('updated_at', sa.DateTime(timezone=True), nullable=False),
    sa.CheckConstraint("category IN ('airplane', 'rotorcraft', 'powered-lift', 'airship', 'glider')", name=op.f('ck_entries_category')),
    sa.CheckConstraint("conditions IS NULL OR conditions IN ('actual', 'simulated')", name=op.f('ck_entries_conditions')),
    sa.CheckConstraint("device IN ('aircraft', 'ffs', 'ftd', 'atd')", name=op.f('ck_entries_device')),
    sa.CheckConstraint('NOT (aircraft_id IS NOT NULL AND device_id IS NOT NULL)', name=op.f('ck_entries_one_machine')),
    sa.CheckConstraint('dual_received_hundredths >= 0', name=op.f('ck_entries_dual_received_hundredths_nonneg')),
    sa.CheckConstraint('holds >= 0', name=op.f('ck_entries_holds_nonneg')),
    sa.CheckConstraint('instrument_actual_hundredths >= 0', name=op.f('ck_entries_instrument_actual_hundredths_nonneg')),
    sa.CheckConstraint('instrument_simulated_hundredths >= 0', name=op.f('ck_entries_instrument_simulated_hundredths_nonneg')),
    sa.CheckConstraint('landings >= 0', name=op.f('ck_entries_landings_nonneg')),
    sa.CheckConstraint('night_full_stop_landings <= landings', name=op.f('ck_entries_night_within_landings')),
    sa.CheckConstraint('night_full_stop_landings >= 0', name=op.f('ck_entries_night_full_stop_landings_nonneg')),
    sa.CheckConstraint('partial_panel_approaches >= 0', name=op.f('ck_entries_partial_panel_approaches_nonneg')),
    sa.CheckConstraint('pic_hundredths >= 0', name=op.f('ck_entries_pic_hundredths_nonneg')),
    sa.CheckConstraint('solo_hundredths >= 0', name=op.f('ck_entries_solo_hundredths_nonneg')),
    sa.CheckConstraint('total_hundredths >= 0', name=op.f('ck_entries_total_hundredths_nonneg')),
    sa.CheckConstraint('ua_nose_high >= 0', name=op.f('ck_entries_ua_nose_high_nonneg')),
    sa.CheckConstraint('ua_nose_low >= 0', name=op.f('ck_entries_ua_nose_low_nonneg')),
    sa.CheckConstraint('unlogged_approaches >= 0', name=op.f('ck_entries_unlogged_approaches_nonneg')),
    sa.CheckConstraint('version >= 1', name=op.f('ck_entries_version_positive')),
    sa.ForeignKeyConstraint(['aircraft_id'], ['aircraft.id'], name=op.f('fk_entries_aircraft_id_aircraft')),
    sa.ForeignKeyConstraint(['device_id'], ['training_devices.id'], name=op.f('fk_entries_device_id_training_devices')),
    sa.ForeignKeyConstraint(['instructor_id'], ['people.id'], name=op.f('fk_entries_instructor_id_people')),
    sa.ForeignKeyConstraint(['pilot_id'], ['people.id'], name=op.f('fk_entries_pilot_id_people')),
    sa.ForeignKeyConstraint(['safety_pilot_id'], ['people.id'], name=op.f('fk_entries_safety_pilot_id_people')),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_entries')),
    sa.UniqueConstraint('pilot_id', 'external_id', name=op.f('uq_entries_pilot_id_external_id'))
    )
    op.create_index('ix_entries_pilot_id_date', 'entries', ['pilot_id', 'date'], unique=False)
    op.create_table('approaches',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('entry_id', sa.Integer(), nullable=False),
    sa.Column('position', sa.Integer(), nullable=False),
    sa.Column('type', sa.String(length=64), nullable=True),
    sa.Column('airfield', sa.String(length=64), nullable=True),
    sa.Column('runway', sa.String(length=16), nullable=True),
    sa.Column('conditions', sa.String(length=16), nullable=True),
    sa.Column('to_minimums', sa.Boolean(), nullable=False),
    sa.Column('coupled', sa.Boolean(), nullable=False),
    sa.CheckConstraint("conditions IS NULL OR conditions IN ('actual', 'simulated')", name=op.f('ck_approaches_conditions')),
    sa.CheckConstraint('position >= 0', name=op.f('ck_approaches_position_nonneg')),
    sa.ForeignKeyConstraint(['entry_id'], ['entries.id'], name=op.f('fk_approaches_entry_id_entries'), ondelete='CASCADE'),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_approaches')),
    sa.UniqueConstraint('entry_id', 'position', name=op.f('uq_approaches_entry_id_position'))
    )
    op.create_table('entry_checks',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('entry_id', sa.Integer(), nullable=False),
    sa.Column('position', sa.Integer(), nullable=False),
    sa.Column('kind', sa.String(length=64), nullable=False),
    sa.CheckConstraint("kind <> ''", name=op.f('ck_entry_checks_kind_not_empty')),
    sa.ForeignKeyConstraint(['entry_id'], ['entries.id'], name=op.f('fk_entry_checks_entry_id_entries'), ondelete='CASCADE'),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_entry_checks')),
    sa.UniqueConstraint('entry_id', 'position', name=op.f('uq_entry_checks_entry_id_position'))
    )
    op.create_index(op.f('ix_entry_checks_kind'), 'entry_checks', ['kind'], unique=False)
    op.create_table('entry_revisions',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('entry_id', sa.Integer(), nullable=False),
    sa.Column('version', sa.Integer(), nullable=False),
    sa.Column('action', sa.String(length=16), nullable=False),
    sa.Column('snapshot', sa.JSON(), nullable=False),
    sa.Column('changed_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('changed_by_id', sa.Integer(), nullable=True),
    sa.CheckConstraint("action IN ('edit', 'delete', 'restore')", name=op.f('ck_entry_revisions_action')),
    sa.ForeignKeyConstraint(['changed_by_id'], ['people.id'], name=op.f('fk_entry_revisions_changed_by_id_people')),
    sa.ForeignKeyConstraint(['entry_id'], ['entries.id'], name=op.f('fk_entry_revisions_entry_id_entries')),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_entry_revisions')),
    sa.UniqueConstraint('entry_id', 'version', name=op.f('uq_entry_revisions_entry_id_version'))
    )
    op.create_index(op.f('ix_entry_revisions_entry_id'), 'entry_revisions', ['entry_id'], unique=False)


def downgrade() -> None:
    op.drop_index(op.f('ix_entry_revisions_entry_id'), table_name='entry_revisions')
    op.drop_table('entry_revisions')
    op.drop_index(op.f('ix_entry_checks_kind'), table_name='entry_checks')
    op.drop_table('entry_checks')
    op.drop_table('approaches')
    op.drop_index('ix_entries_pilot_id_date', table_name='entries')
    op.drop_table('entries')
    op.drop_index(op.f('ix_availability_windows_person_id'), table_name='availability_windows')
    op.drop_index(op.f('ix_availability_windows_device_id'), table_name='availability_windows')
    op.drop_index(op.f('ix_availability_windows_aircraft_id'), table_name='availability_windows')
    op.drop_table('availability_windows')
    op.drop_index(op.f('ix_training_devices_school_id'), table_name='training_devices')
    op.drop_table('training_devices')
    op.drop_index(op.f('ix_people_school_id'), table_name='people')
    op.drop_table('people')
    op.drop_index(op.f('ix_aircraft_school_id'), table_name='aircraft')
    op.drop_table('aircraft')
    op.drop_table('schools')
    op.drop_table('airfields')
