package analyze

import (
	"context"
	"fmt"
	"runtime"
	"runtime/debug"
	"sync"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// Panel analyses every object of the panel, spread over the machine's
// cores; results come back in the panel's object order, with only the
// fits the store keeps when s.StoredOnly. Once ctx ends, no
// further object is started, the ones under way finish, and ctx's error is
// returned without results.
func Panel(ctx context.Context, p *costdrift.Panel, s Settings) ([]Result, error) {
	results := make([]Result, len(p.Objects))
	s.shared = newShared(p, s)
	work := make(chan int)
	var wg sync.WaitGroup
	for range runtime.GOMAXPROCS(0) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			s := s
			if s.StoredOnly {
				s.fits = new([]costdrift.Fit)
			}
			s.scratch = new(scratch)
			for i := range work {
				s.scratch.reset() // nothing of the last object's analysis is held
				r := objectRecovered(p, &p.Objects[i], s)
				if s.StoredOnly {
					// Copies: r's own fits, or those of its analysis
					// without the break, may be s.fits, which the next
					// object reuses.
					r.Fits = r.Stored()
					if r.Unbroken != nil {
						r.Unbroken.Fits = r.Unbroken.Stored()
					}
				}
				results[i] = r
			}
		}()
	}
feed:
	for i := range p.Objects {
		select {
		case work <- i:
		case <-ctx.Done():
			break feed
		}
	}
	close(work)
	wg.Wait()
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	return results, nil
}

// objectRecovered is Object, except that a panic in one object's analysis
// (a defect, never an expected outcome) is caught and returned as the
// result's Err, so that the other objects of the panel are still analysed.
// The result then holds only the object's name.
func objectRecovered(p *costdrift.Panel, o *costdrift.ObjectSeries, s Settings) (r Result) {
	defer func() {
		if v := recover(); v != nil {
			r = Result{Behaviour: costdrift.Behaviour{Object: o.Object},
				Err: fmt.Errorf("analyze %s: internal error: %v", o.Object, v), Stack: string(debug.Stack())}
		}
	}()
	return Object(p, o, s)
}
