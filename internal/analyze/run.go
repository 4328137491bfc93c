package analyze

import (
	"runtime"
	"sync"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// Panel analyses every object of the panel, spread over the machine's
// cores; results come back in the panel's object order.
func Panel(p *costdrift.Panel, s Settings) []Result {
	results := make([]Result, len(p.Objects))
	work := make(chan int)
	var wg sync.WaitGroup
	for range runtime.GOMAXPROCS(0) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range work {
				results[i] = Object(p, &p.Objects[i], s)
			}
		}()
	}
	for i := range p.Objects {
		work <- i
	}
	close(work)
	wg.Wait()
	return results
}
