// Package schedule runs the service's periodic work and delivers its
// notifications.
//
// Scheduled jobs (Runner): every replica runs the same cron specs; each tick
// takes a transaction-scoped PostgreSQL advisory lock keyed by the job's
// name, so exactly one replica does the work. The job body runs inside that
// lock's transaction: whatever it writes commits together with its 'ok' run
// record, or not at all (an error, panic, cancelled context or dead process
// rolls it back). Every attempt is recorded in job_runs: 'running' while it
// runs, then 'ok' with the job's counts or 'failed' with the error; replicas
// that lose the lock, or find the tick already done by another replica,
// record 'skipped' with the reason.
//
// Notifications (Enqueue, Deliverer): a transactional outbox. Callers insert
// a notification in the same transaction as the change it reports; a
// Deliverer claims due rows with FOR UPDATE SKIP LOCKED, POSTs them as JSON to
// every configured webhook URL with the delivery id as Idempotency-Key, and
// retries failures with exponential backoff and jitter. A URL that already
// answered 2xx is not posted again.
//
// Webhook URLs are checked against server-side request forgery (OWASP API
// Security Top 10 2023, API7): only http and https, no user info, and no
// host that resolves to a loopback, link-local, unspecified, multicast or
// (unless allowed) private address. The HTTP client from NewClient re-checks
// the address it actually dials, which defeats DNS rebinding and redirects.
package schedule
