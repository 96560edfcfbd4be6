package dispatch

import (
	"context"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

func TestShellQuoteRoundTrip(t *testing.T) {
	args := []string{"plain", "with space", "it's", `"double"`, `back\slash`, "$HOME", "`id`", "*", "", "a'b'c", "tab\there", ";|&<>"}
	line := ""
	for _, a := range args {
		line += " " + shellQuote(a)
	}
	got, err := exec.Command("/bin/sh", "-c", `eval "set -- $1"; for a in "$@"; do printf '[%s]' "$a"; done`, "sh", line).Output()
	if err != nil {
		t.Fatal(err)
	}
	want := ""
	for _, a := range args {
		want += "[" + a + "]"
	}
	if string(got) != want {
		t.Errorf("after eval:\n got %s\nwant %s", got, want)
	}
}

func TestArrayRangeAndBlocks(t *testing.T) {
	for _, c := range []struct {
		n, perMin, maxArray, maxRunning int
		per                             int
		rng                             string
	}{
		{5, 0, 1001, 0, 1, "0-4"},
		{5, 0, 1001, 2, 1, "0-4%2"},
		{1000, 0, 1001, 0, 1, "0-999"},
		{1001, 0, 1001, 0, 2, "0-500"},
		{2000, 0, 1001, 0, 2, "0-999"},
		{2001, 0, 1001, 0, 3, "0-666"},
		{10, 3, 1001, 0, 3, "0-3"},
		{10, 0, 4, 1, 4, "0-2%1"},
		{1, 0, 1, 0, 1, "0-0"},
	} {
		per := blockSize(c.n, c.perMin, c.maxArray)
		rng := arrayRange(c.n, per, c.maxRunning)
		if per != c.per || rng != c.rng {
			t.Errorf("n=%d min=%d max=%d: per %d range %s, want %d %s", c.n, c.perMin, c.maxArray, per, rng, c.per, c.rng)
		}
	}
}

// weirdDir makes a directory whose path has a space, a quote and a '%'.
func weirdDir(t *testing.T) string {
	dir := filepath.Join(t.TempDir(), `tile's dir 5%`)
	if err := os.Mkdir(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	return dir
}

func TestScripts(t *testing.T) {
	dir := weirdDir(t)
	s := Slurm{Partition: "ci", Time: "0:10:00", Mem: "1G", Account: "grp", Extra: []string{"--qos=low"}}
	a, err := s.arrayScript(dir, "sv-x", 3, 7)
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{
		"#!/bin/sh\n#SBATCH --job-name=sv-x\n",
		`#SBATCH --output="` + strings.ReplaceAll(dir, "%", "%%") + `/logs/slurm-%A_%a.log"` + "\n",
		"#SBATCH --partition=ci\n#SBATCH --time=0:10:00\n#SBATCH --mem=1G\n#SBATCH --account=grp\n#SBATCH --qos=low\n",
		"dir=" + shellQuote(dir) + "\nper=3\ncount=7\n",
	} {
		if !strings.Contains(a, want) {
			t.Errorf("array script lacks %q:\n%s", want, a)
		}
	}
	bare, err := Slurm{}.arrayScript(dir, "sv-x", 1, 1)
	if err != nil {
		t.Fatal(err)
	}
	for _, no := range []string{"--partition", "--time", "--mem", "--account"} {
		if strings.Contains(bare, no) {
			t.Errorf("unset option %s written", no)
		}
	}
	final := Task{Name: "fin", Args: []string{"/bin/prog", "a b", "c'd"}}
	f, err := s.finalScript(dir, "sv-x-final", final)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(f, "\n'/bin/prog' 'a b' 'c'\\''d' >\"$dir/logs/$name.log\" 2>&1") || !strings.Contains(f, "slurm/names.txt") {
		t.Errorf("final script:\n%s", f)
	}
	if _, err := s.arrayScript(`/a"b`, "x", 1, 1); err == nil {
		t.Error("a double quote in the directory was accepted")
	}
	if _, err := (Slurm{Extra: []string{"--a\n--b"}}).arrayScript("/d", "x", 1, 1); err == nil {
		t.Error("an extra option with a line break was accepted")
	}
	if _, err := taskLine(Task{Name: "n", Args: []string{"/bin/x", "a\nb"}}); err == nil {
		t.Error("a line break in an argument was accepted")
	}
}

// TestArrayScriptRunsBlocks runs array.sh under /bin/sh as Slurm would, for
// each element, in a directory with a space, a quote and a '%'.
func TestArrayScriptRunsBlocks(t *testing.T) {
	dir := weirdDir(t)
	odd := []string{"a b", "it's", `"q"`, "$HOME", "*", ""}
	var tasks []Task
	for i := range 5 {
		code := "0"
		if i == 3 {
			code = "6"
		}
		tasks = append(tasks, sh(fmt.Sprintf("b%d", i), `printf '[%s]' "$@" > "out.$0"; exit `+code, odd...))
	}
	job, err := prepare(Job{Dir: dir, Tasks: tasks})
	if err != nil {
		t.Fatal(err)
	}
	if err := os.MkdirAll(filepath.Join(dir, "slurm"), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := (Slurm{}).writeArray(job, tasks, "sv", 2); err != nil {
		t.Fatal(err)
	}
	rcs := []bool{}
	for id := range 3 {
		cmd := exec.Command("/bin/sh", filepath.Join(dir, "slurm", "array.sh"))
		cmd.Env = append(os.Environ(), fmt.Sprintf("SLURM_ARRAY_TASK_ID=%d", id))
		cmd.Dir = t.TempDir()
		err := cmd.Run()
		rcs = append(rcs, err == nil)
	}
	if fmt.Sprint(rcs) != "[true false true]" {
		t.Errorf("array elements succeeded %v, want [true false true]", rcs)
	}
	want := ""
	for _, a := range odd {
		want += "[" + a + "]"
	}
	for i, tk := range tasks {
		if got := readFile(t, filepath.Join(dir, "out."+tk.Name)); got != want {
			t.Errorf("%s got args %s, want %s", tk.Name, got, want)
		}
		code, ran := result(dir, tk.Name)
		if wantCode := map[bool]int{true: 6, false: 0}[i == 3]; !ran || code != wantCode {
			t.Errorf("%s marker: code %d ran %v", tk.Name, code, ran)
		}
	}
}

// fakeSlurm writes sbatch, squeue and scontrol into a temporary directory.
// They append their arguments to calls.log; sbatch runs the scripts inline
// (every array element, then a final only when its dependency succeeded)
// and squeue lists the jobs as running for the first two calls.
func fakeSlurm(t *testing.T, maxArray int) string {
	bin := t.TempDir()
	d := shellQuote(bin)
	files := map[string]string{
		"sbatch": `#!/bin/sh
d=` + d + `
[ -f "$d/sbatch.fail" ] && { echo "sbatch: error: Batch job submission failed: Invalid partition name specified" >&2; exit 1; }
n=$(cat "$d/next" 2>/dev/null || echo 700)
echo $((n + 1)) >"$d/next"
printf 'sbatch' >>"$d/calls.log"; for a in "$@"; do printf ' <%s>' "$a" >>"$d/calls.log"; done; echo >>"$d/calls.log"
array= dep= script=
for a in "$@"; do
	case $a in
	--array=*) array=${a#--array=} ;;
	--dependency=afterok:*) dep=${a#--dependency=afterok:} ;;
	-*) ;;
	*) script=$a ;;
	esac
done
if [ -n "$dep" ] && [ -f "$d/failed.$dep" ]; then echo "$n;fake"; exit 0; fi
if [ -n "$array" ]; then
	last=${array%%%*}; last=${last#0-}
	i=0
	while [ "$i" -le "$last" ]; do
		SLURM_ARRAY_TASK_ID=$i sh "$script" >>"$d/jobs.out" 2>&1 || touch "$d/failed.$n"
		i=$((i + 1))
	done
else
	sh "$script" >>"$d/jobs.out" 2>&1 || touch "$d/failed.$n"
fi
echo "$n;fake"
`,
		"squeue": `#!/bin/sh
d=` + d + `
printf 'squeue' >>"$d/calls.log"; for a in "$@"; do printf ' <%s>' "$a" >>"$d/calls.log"; done; echo >>"$d/calls.log"
c=$(cat "$d/squeue.n" 2>/dev/null || echo 0)
echo $((c + 1)) >"$d/squeue.n"
if [ "$c" -lt 2 ]; then echo "$3" | tr , '\n' | sed 's/$/_[0-1] RUNNING/'; fi
`,
		"scontrol": `#!/bin/sh
d=` + d + `
printf 'scontrol' >>"$d/calls.log"; for a in "$@"; do printf ' <%s>' "$a" >>"$d/calls.log"; done; echo >>"$d/calls.log"
echo "Configuration data as of now"
echo "MaxArraySize            = ` + fmt.Sprint(maxArray) + `"
echo "MaxJobCount             = 10000"
`,
	}
	for name, body := range files {
		if err := os.WriteFile(filepath.Join(bin, name), []byte(body), 0o755); err != nil {
			t.Fatal(err)
		}
	}
	return bin
}

func calls(t *testing.T, bin string) []string {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(bin, "calls.log"))
	if err != nil && !errors.Is(err, os.ErrNotExist) {
		t.Fatal(err)
	}
	return strings.Split(strings.TrimSpace(string(b)), "\n")
}

func TestSlurmFake(t *testing.T) {
	bin := fakeSlurm(t, 4)
	dir := weirdDir(t)
	var tasks []Task
	for i := range 7 {
		tasks = append(tasks, sh(fmt.Sprintf("t%d", i), `echo x >> "runs.$0"; [ "$0" != t4 ] || [ -f fixed ] || exit 5`))
	}
	final := sh("gather", `echo x >> runs.gather`)
	job := Job{Dir: dir, Tasks: tasks, Final: &final}
	s := Slurm{Bin: bin, MaxRunning: 2, Wait: true, Poll: 10 * time.Millisecond}
	out, err := s.Run(context.Background(), job)
	if err != nil {
		t.Fatal(err)
	}
	// 7 tasks, MaxArraySize 4: 3 elements of 3 tasks.
	sl := filepath.Join(dir, "slurm")
	want := []string{
		"scontrol <show> <config>",
		"sbatch <--parsable> <--array=0-2%2> <" + sl + "/array.sh>",
		"sbatch <--parsable> <--dependency=afterok:700> <--kill-on-invalid-dep=yes> <" + sl + "/final.sh>",
		"squeue <-h> <-j> <700,701> <-o> <%i %T>",
		"squeue <-h> <-j> <700,701> <-o> <%i %T>",
		"squeue <-h> <-j> <700,701> <-o> <%i %T>",
	}
	if got := calls(t, bin); strings.Join(got, "\n") != strings.Join(want, "\n") {
		t.Errorf("calls:\n%s\nwant:\n%s", strings.Join(got, "\n"), strings.Join(want, "\n"))
	}
	if fmt.Sprint(out.JobIDs) != "[700 701]" {
		t.Errorf("job ids %v", out.JobIDs)
	}
	if len(out.Failed) != 1 || out.Failed[0] != (TaskFailure{Name: "t4", ExitCode: 5, Log: filepath.Join(dir, "logs", "t4.log")}) {
		t.Errorf("failed %+v", out.Failed)
	}
	if out.FinalRan || out.FinalOK || exists(filepath.Join(dir, "runs.gather")) {
		t.Errorf("final ran after a failure: %+v", out)
	}
	lines := strings.Count(readFile(t, filepath.Join(sl, "tasks.txt")), "\n")
	if lines != 7 {
		t.Errorf("tasks.txt has %d lines", lines)
	}

	// Rerun: only t4, in an array of one, then the final.
	if err := os.WriteFile(filepath.Join(dir, "fixed"), nil, 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.Remove(filepath.Join(bin, "calls.log")); err != nil {
		t.Fatal(err)
	}
	// The earlier jobs have left the queue.
	if err := os.WriteFile(filepath.Join(bin, "squeue.n"), []byte("2\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	out, err = s.Run(context.Background(), job)
	if err != nil {
		t.Fatal(err)
	}
	got := calls(t, bin)
	// The first squeue asks whether the earlier jobs are still queued.
	if len(got) < 5 || got[0] != "squeue <-h> <-j> <700,701> <-o> <%i %T>" ||
		got[2] != "sbatch <--parsable> <--array=0-0%2> <"+sl+"/array.sh>" ||
		got[3] != "sbatch <--parsable> <--dependency=afterok:702> <--kill-on-invalid-dep=yes> <"+sl+"/final.sh>" {
		t.Errorf("rerun calls:\n%s", strings.Join(got, "\n"))
	}
	if strings.Join(out.Ran, ",") != "t4" || len(out.Failed) != 0 || !out.FinalRan || !out.FinalOK {
		t.Errorf("rerun outcome %+v", out)
	}
	for i := range 7 {
		n := strings.Count(readFile(t, filepath.Join(dir, fmt.Sprintf("runs.t%d", i))), "x")
		if want := map[bool]int{true: 2, false: 1}[i == 4]; n != want {
			t.Errorf("t%d ran %d times, want %d", i, n, want)
		}
	}
}

func TestSlurmFinalOnlyAndNoWait(t *testing.T) {
	bin := fakeSlurm(t, 1001)
	dir := t.TempDir()
	final := sh("gather", `true`)
	job := Job{Dir: dir, Tasks: []Task{sh("a", "true")}, Final: &final}
	for _, name := range []string{"a.ok"} {
		if err := os.MkdirAll(filepath.Join(dir, "status"), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, "status", name), []byte("0\n"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	out, err := Slurm{Bin: bin}.Run(context.Background(), job)
	if err != nil {
		t.Fatal(err)
	}
	got := calls(t, bin)
	if len(got) != 1 || got[0] != "sbatch <--parsable> <"+dir+"/slurm/final.sh>" || fmt.Sprint(out.JobIDs) != "[700]" {
		t.Errorf("calls %q, ids %v", got, out.JobIDs)
	}
	if len(out.Ran) != 0 || out.FinalOK || out.FinalRan {
		t.Errorf("without Wait the outcome claims results: %+v", out)
	}
}

func TestSlurmSbatchError(t *testing.T) {
	bin := fakeSlurm(t, 1001)
	if err := os.WriteFile(filepath.Join(bin, "sbatch.fail"), nil, 0o644); err != nil {
		t.Fatal(err)
	}
	_, err := Slurm{Bin: bin, Partition: "nope"}.Run(context.Background(), Job{Dir: t.TempDir(), Tasks: []Task{sh("a", "true")}})
	var ce *CommandError
	if !errors.As(err, &ce) || !strings.Contains(ce.Stderr, "Invalid partition name") || !strings.Contains(err.Error(), "sbatch") {
		t.Fatalf("error %v", err)
	}
}

func TestSlurmRefusesWhileQueued(t *testing.T) {
	bin := fakeSlurm(t, 1001)
	dir := t.TempDir()
	if err := os.MkdirAll(filepath.Join(dir, "slurm"), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "slurm", "jobids"), []byte("55\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err := Slurm{Bin: bin}.Run(context.Background(), Job{Dir: dir, Tasks: []Task{sh("a", "true")}})
	if err == nil || !strings.Contains(err.Error(), "55") {
		t.Fatalf("error %v, want one naming job 55", err)
	}
}
