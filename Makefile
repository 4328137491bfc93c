# costdrift: what a developer can do. `make help` lists it.
GO      ?= go
VERSION ?= $(shell git describe --tags --always --dirty 2>/dev/null || echo dev)
LDFLAGS := -X main.version=$(VERSION)

.PHONY: help build test demo lint mailpit crosscheck bench-sync bench-analyze study-drift soak ci

help: ## list the targets
	@awk 'BEGIN {FS = ":.*## "} /^[a-z-]+:.*## / {printf "  %-14s %s\n", $$1, $$2}' $(MAKEFILE_LIST)

build: ## build bin/costdrift
	$(GO) build -ldflags "$(LDFLAGS)" -o bin/costdrift ./cmd/costdrift

test: ## run every test: unit, store, end-to-end
	$(GO) test -count=1 ./...

demo: build ## an invented company's books synced, analysed and reported (in costdrift-demo/)
	./bin/costdrift demo --dir costdrift-demo
	@echo "Web view: ./bin/costdrift serve --config costdrift-demo/costdrift.yaml, then open http://127.0.0.1:9464/"

lint: ## gofmt and go vet
	@unformatted=$$(gofmt -l cmd internal migrations); if [ -n "$$unformatted" ]; then echo "gofmt needed: $$unformatted"; exit 1; fi
	$(GO) vet ./...

mailpit: ## install the SMTP server the alert-mail tests run against, into $(go env GOPATH)/bin
	$(GO) install github.com/axllent/mailpit@v1.33.1

crosscheck: ## regenerate the statsmodels/SciPy/R check values, compare with the committed ones, run the Go checks
	bash scripts/crosscheck/run.sh

bench-sync: ## sync of 1,000,000-line ledgers of three shapes against the sqlite3 shell's .import, side by side
	bash scripts/bench-sync.sh 1000000

bench-analyze: ## analysis of 10,000 objects x 30 drivers x 2 lags against a statsmodels loop and a numpy floor; the analyze command store to store at 10,000 and 100,000 objects
	bash scripts/bench-analyze/run.sh

study-drift: ## drift alerts over a year: 2,000 stable and 400 shifted invented objects rolled forward 12 month-ends
	$(GO) run ./scripts/study-drift -stable 2000 -shifted 400

SOAK_ROTATE ?= 20
soak: build ## run the daemon 10 minutes with a file arriving every 3 s; sample goroutines, open files, RSS, Go heap, store (not in CI)
	ROTATE=$(SOAK_ROTATE) bash scripts/soak.sh 600 30

ci: ## what CI runs: lint, test, demo
	bash .ci/run
