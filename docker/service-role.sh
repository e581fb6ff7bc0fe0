#!/bin/sh
# Run by the postgres image once, when the database volume is first made: the
# login of the service's least-privilege role, with the password from
# ROTORWRIGHT_SERVICE_PASSWORD. Migration 008 finds the role and grants it
# what the service needs.
set -eu
psql -v ON_ERROR_STOP=1 -v pw="$ROTORWRIGHT_SERVICE_PASSWORD" \
  --username "$POSTGRES_USER" --dbname "$POSTGRES_DB" <<'SQL'
CREATE ROLE rotorwright_service LOGIN PASSWORD :'pw';
SQL
