// Package dispatch runs a list of independent tasks and then one final
// task, either as local processes (Local) or as a Slurm job array followed
// by a dependent job (Slurm).
//
// A Job names a work directory DIR. Every task writes its standard output
// and error to DIR/logs/<name>.log, and the code that wraps it (Go for
// Local, the generated shell script for Slurm) records the result as a
// marker: DIR/status/<name>.ok or DIR/status/<name>.failed, holding the
// exit code. Markers, not the scheduler's accounting, decide what
// succeeded, so a cluster without an accounting database works. Running
// the same Job again runs only the tasks without an .ok marker (Pending),
// then the final; when every task and the final already have .ok markers
// nothing runs.
//
// The final runs only when every task of the Job has an .ok marker. Under
// Slurm it is submitted with an afterok dependency on the array and
// --kill-on-invalid-dep=yes, so a failed task cancels it instead of
// leaving it pending, and the final script checks the markers again.
//
// Slurm writes DIR/slurm/tasks.txt (one pending task a line: the name, then
// the shell-quoted arguments), DIR/slurm/names.txt (every task name),
// DIR/slurm/array.sh and DIR/slurm/final.sh, and records the submitted job
// ids in DIR/slurm/jobids so that a second submission is refused while the
// first is still queued.
package dispatch
