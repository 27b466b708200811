# Sourced by bin/test and bin/with-test-env: the test database and fakes, on ports apart from bin/start's.
# shellcheck shell=bash
source "$(dirname "${BASH_SOURCE[0]}")/lib.sh"
ensure_node_modules
ensure_postgres
TEST_DB="${TEST_DB:-tracewell_test}"
export NODE_ENV=test
export DATABASE_URL="postgres://postgres@127.0.0.1:$PG_PORT/$TEST_DB"
export SESSION_SECRET="test-secret-not-for-production-0123456789"
export TEST_PORT="${TEST_PORT:-3100}"
export APP_URL="http://localhost:$TEST_PORT"
export COOKIE_SECURE=false
TEST_FAKES_DIR="$DATA_DIR/test-fakes"
TEST_S3_PORT="${TEST_S3_PORT:-4579}"
TEST_SMTP_PORT="${TEST_SMTP_PORT:-2535}"
