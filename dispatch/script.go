package dispatch

import (
	"fmt"
	"strings"
)

// shellQuote quotes s for a POSIX shell: in single quotes, each single
// quote of s closing the quotes, escaped, and reopening them.
func shellQuote(s string) string {
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}

// taskLine is one line of tasks.txt: the name, then the quoted arguments.
func taskLine(t Task) (string, error) {
	var b strings.Builder
	b.WriteString(t.Name)
	for _, a := range t.Args {
		if strings.ContainsAny(a, "\n\r") {
			return "", fmt.Errorf("dispatch: task %s: argument %q has a line break, which tasks.txt cannot hold", t.Name, a)
		}
		b.WriteByte(' ')
		b.WriteString(shellQuote(a))
	}
	return b.String(), nil
}

// sbatchValue quotes a value for an #SBATCH line, which sbatch splits at
// blanks unless double-quoted and which has no escape for '"'.
func sbatchValue(what, s string) (string, error) {
	if strings.ContainsAny(s, "\"\n\r") {
		return "", fmt.Errorf("dispatch: %s %q has a double quote or line break, which an #SBATCH line cannot hold", what, s)
	}
	if strings.ContainsAny(s, " \t'\\#") {
		return `"` + s + `"`, nil
	}
	return s, nil
}

// scriptHead is the #SBATCH block shared by both scripts. out is the
// --output path, in which a literal '%' must already be doubled.
func (s Slurm) scriptHead(name, out string) (string, error) {
	var b strings.Builder
	b.WriteString("#!/bin/sh\n")
	opts := []struct{ flag, value string }{
		{"--job-name", name},
		{"--output", out},
		{"--partition", s.Partition},
		{"--time", s.Time},
		{"--mem", s.Mem},
		{"--account", s.Account},
	}
	for _, o := range opts {
		if o.value == "" {
			continue
		}
		v, err := sbatchValue(o.flag, o.value)
		if err != nil {
			return "", err
		}
		fmt.Fprintf(&b, "#SBATCH %s=%s\n", o.flag, v)
	}
	for _, e := range s.Extra {
		if strings.ContainsAny(e, "\n\r") || !strings.HasPrefix(e, "-") {
			return "", fmt.Errorf("dispatch: extra sbatch option %q is not a single option", e)
		}
		fmt.Fprintf(&b, "#SBATCH %s\n", e)
	}
	return b.String(), nil
}

// markerFunc is shell that records a task's exit code the way
// writeMarker does.
const markerFunc = `mark() {
	if [ "$2" -eq 0 ]; then kind=ok; else kind=failed; fi
	echo "$2" >"$dir/status/$1.$kind.tmp" && mv -f "$dir/status/$1.$kind.tmp" "$dir/status/$1.$kind"
}
`

// arrayScript runs lines first..last of tasks.txt for one array element;
// per is the number of tasks an element runs, count the number of lines.
func (s Slurm) arrayScript(dir, jobName string, per, count int) (string, error) {
	head, err := s.scriptHead(jobName, strings.ReplaceAll(dir, "%", "%%")+"/logs/slurm-%A_%a.log")
	if err != nil {
		return "", err
	}
	return head + fmt.Sprintf(`# Written by starvet dispatch; runs tasks %d at a time from tasks.txt.
dir=%s
per=%d
count=%d
`, per, shellQuote(dir), per, count) + markerFunc + `cd "$dir" || exit 1
: "${SLURM_ARRAY_TASK_ID:?not run as an array task}"
first=$((SLURM_ARRAY_TASK_ID * per + 1))
last=$((first + per - 1))
[ "$last" -le "$count" ] || last=$count
rc=0
i=$first
while [ "$i" -le "$last" ]; do
	line=$(sed -n "${i}p" "$dir/slurm/tasks.txt")
	[ -n "$line" ] || { echo "dispatch: no line $i in $dir/slurm/tasks.txt" >&2; exit 1; }
	eval "set -- $line"
	name=$1
	shift
	rm -f "$dir/status/$name.ok" "$dir/status/$name.failed"
	echo "dispatch: task $name on $(hostname)"
	"$@" >"$dir/logs/$name.log" 2>&1 </dev/null
	code=$?
	mark "$name" "$code"
	[ "$code" -eq 0 ] || rc=1
	i=$((i + 1))
done
exit $rc
`, nil
}

// finalScript runs the final task after checking every task's marker.
func (s Slurm) finalScript(dir, jobName string, final Task) (string, error) {
	head, err := s.scriptHead(jobName, strings.ReplaceAll(dir, "%", "%%")+"/logs/slurm-%j.log")
	if err != nil {
		return "", err
	}
	line, err := taskLine(final)
	if err != nil {
		return "", err
	}
	args := line[len(final.Name)+1:]
	return head + fmt.Sprintf(`# Written by starvet dispatch; runs the final task once every task succeeded.
dir=%s
name=%s
`, shellQuote(dir), final.Name) + markerFunc + `cd "$dir" || exit 1
rm -f "$dir/status/$name.ok" "$dir/status/$name.failed"
while read -r t; do
	if [ ! -f "$dir/status/$t.ok" ]; then
		echo "dispatch: task $t has not succeeded, final $name not run" >&2
		exit 1
	fi
done <"$dir/slurm/names.txt"
` + args + ` >"$dir/logs/$name.log" 2>&1 </dev/null
code=$?
mark "$name" "$code"
exit $code
`, nil
}
