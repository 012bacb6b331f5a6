-- A failure's kind apart from its message (workers/core/errors.ts, FailureKind):
--   input    the file or request was wrong (re-running cannot fix it)
--   service  a database, Redis or worker failed (the next ingest finishes the work)
--   bug      anything else
-- error holds the message alone, as outputs print it. Before 007 a run's error could
-- start with the error's class name ("InputError: ", "ServiceError: ", "TypeError: ";
-- or "Error: "); that prefix is moved into the kind here. No failure is dropped: every row keeps its
-- message (the text after the prefix), and a message without a prefix is kept whole.
ALTER TABLE runs ADD COLUMN error_kind text CHECK (error_kind IN ('input', 'service', 'bug'));
ALTER TABLE scenes ADD COLUMN error_kind text CHECK (error_kind IN ('input', 'service', 'bug'));

-- ServiceError's subclass StoreBusyError (workers/store/owner.ts) is a service failure;
-- any other class name but InputError and ServiceError is a bug.
UPDATE runs SET
  error_kind = CASE
    WHEN error LIKE 'InputError: %' THEN 'input'
    WHEN error LIKE 'ServiceError: %' OR error LIKE 'StoreBusyError: %' THEN 'service'
    ELSE 'bug' END,
  error = substr(error, strpos(error, ': ') + 2)
WHERE error ~ '^([A-Z][A-Za-z]*)?Error: ';

-- Before 007 a scene was stored as failed only for bad input (a file that could not be
-- read, a corrupt or refused scene: the jobs record InputErrors only), so a failed scene
-- without a class name in front is an input failure.
UPDATE scenes SET
  error_kind = CASE
    WHEN error LIKE 'ServiceError: %' OR error LIKE 'StoreBusyError: %' THEN 'service'
    WHEN error ~ '^([A-Z][A-Za-z]*)?Error: ' AND error NOT LIKE 'InputError: %' THEN 'bug'
    ELSE 'input' END,
  error = CASE WHEN error ~ '^([A-Z][A-Za-z]*)?Error: ' THEN substr(error, strpos(error, ': ') + 2) ELSE error END
WHERE error IS NOT NULL;

ALTER TABLE scenes ADD CONSTRAINT scenes_failed_has_kind CHECK (status <> 'failed' OR error_kind IS NOT NULL);
