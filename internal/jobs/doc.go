// Package jobs runs long computations (an import of a large file, and later
// window derivation, training and scoring) as jobs: rows with a status,
// progress from 0 to 100 with a short message, timestamps and a small JSON
// result. It knows no domain: a kind is a name with a Func registered on the
// Runner, and jobs are kept through the Storage interface, which
// internal/store implements in SQLite.
//
// A fixed pool of workers takes queued jobs in the order they were
// submitted. SQLite has one writer, so a running job's progress lives in
// memory: Get and List overlay it on the stored row, and it is written only
// when the status changes and every PersistEvery while the job runs. Cancel
// takes a queued job off the queue at once and cancels a running job's
// context, after which its Func must return promptly. A job's error reaches
// users only as a problem message; any other error is shown as "Something
// went wrong (ref 3fa91c)" and logged in full with that reference, and a
// panic in a Func counts as such an error without killing its worker. Jobs
// left queued or running by a stopped or crashed process are marked
// interrupted by the next Start and can be re-run as new jobs that name the
// job they re-run.
package jobs
