package app

import (
	"context"
	"sync"
)

// Poster hands work to the goroutine that owns the session (the UI
// goroutine in the workbench). Fyne's fyne.Do fits; tests pass a function
// that runs its argument at once.
type Poster func(func())

// immediate runs f on the caller's goroutine.
func immediate(f func()) { f() }

// coalescer delivers the latest of a stream of updates through a Poster,
// with at most one delivery queued at any time: a worker that reports a
// thousand times a second costs the UI queue one entry per frame it can
// actually draw.
type coalescer struct {
	post    Poster
	mu      sync.Mutex
	pending bool
	latest  func()
}

func newCoalescer(p Poster) *coalescer { return &coalescer{post: p} }

// Post replaces the pending update with f and queues a delivery if none is
// queued.
func (c *coalescer) Post(f func()) {
	c.mu.Lock()
	c.latest = f
	if c.pending {
		c.mu.Unlock()
		return
	}
	c.pending = true
	c.mu.Unlock()
	c.post(func() {
		c.mu.Lock()
		g := c.latest
		c.latest = nil
		c.pending = false
		c.mu.Unlock()
		if g != nil {
			g()
		}
	})
}

// Job is one long task of a session: a goroutine with its own context.
type Job struct {
	Kind   string
	cancel context.CancelFunc
	done   chan struct{}
	err    error
}

// Cancel asks the job to stop; it returns at once.
func (j *Job) Cancel() { j.cancel() }

// Wait blocks until the job's goroutine has returned and gives its error.
func (j *Job) Wait() error { <-j.done; return j.err }

// Done is closed when the job's goroutine has returned.
func (j *Job) Done() <-chan struct{} { return j.done }

// jobs keeps the running jobs of a session by kind: starting a job of a
// kind cancels the one before it, so a restarted render or a second fit
// never races the first.
type jobs struct {
	mu      sync.Mutex
	parent  context.Context
	running map[string]*Job
	all     sync.WaitGroup
	// finishMu lets one job's finish run at a time. With fyne.Do a finish
	// only queues its result for the UI goroutine; with a Poster that runs
	// its argument at once (NewSession with nil, in tests) the results of
	// two jobs that end together (a cancelled photo load and its
	// replacement) would otherwise be applied to the session at the same
	// time, which the race detector reported.
	finishMu sync.Mutex
}

func newJobs(parent context.Context) *jobs {
	if parent == nil {
		parent = context.Background()
	}
	return &jobs{parent: parent, running: map[string]*Job{}}
}

// start cancels the job of the same kind and runs fn in a new goroutine.
// finish, if set, is called on the job's goroutine with fn's error after fn
// returns (hand it to a Poster to touch state).
func (js *jobs) start(kind string, fn func(ctx context.Context) error, finish func(error)) *Job {
	ctx, cancel := context.WithCancel(js.parent)
	j := &Job{Kind: kind, cancel: cancel, done: make(chan struct{})}
	js.mu.Lock()
	if old := js.running[kind]; old != nil {
		old.cancel()
	}
	js.running[kind] = j
	js.mu.Unlock()
	js.all.Add(1)
	go func() {
		defer js.all.Done()
		j.err = fn(ctx)
		cancel()
		js.mu.Lock()
		if js.running[kind] == j {
			delete(js.running, kind)
		}
		js.mu.Unlock()
		if finish != nil {
			js.finishMu.Lock()
			finish(j.err)
			js.finishMu.Unlock()
		}
		close(j.done)
	}()
	return j
}

// get returns the running job of a kind, or nil.
func (js *jobs) get(kind string) *Job {
	js.mu.Lock()
	defer js.mu.Unlock()
	return js.running[kind]
}

// cancel stops the job of a kind, if any.
func (js *jobs) cancel(kind string) {
	if j := js.get(kind); j != nil {
		j.cancel()
	}
}

// cancelAll stops every job.
func (js *jobs) cancelAll() {
	js.mu.Lock()
	for _, j := range js.running {
		j.cancel()
	}
	js.mu.Unlock()
}

// wait blocks until every job started so far has returned.
func (js *jobs) wait() { js.all.Wait() }
