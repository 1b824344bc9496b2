# massmodel: `make demo` runs the main job on the demo car, `make test` runs the test suite.
# Both create or refresh the virtual environment in .venv first (idempotent: reinstalls only when
# pyproject.toml changes).
PYTHON ?= python3
VENV := .venv
PY := $(VENV)/bin/python
STAMP := $(VENV)/.massmodel-installed
export VTK_DEFAULT_OPENGL_WINDOW ?= vtkEGLRenderWindow
export PIP_DISABLE_PIP_VERSION_CHECK := 1

VIEWER := massmodel/page/static/viewer.js
VIEWER_SRC := massmodel/page/js

.PHONY: venv viewer test demo bench lint clean

$(STAMP): pyproject.toml
	test -x $(PY) || $(PYTHON) -m venv $(VENV)
	$(PY) -m pip install -q -e '.[dev]' 2>&1 | grep -v "^WARNING: Location" || true
	$(PY) -c "import massmodel, numpy, cadquery, trimesh, pyvista, pytest"
	touch $(STAMP)

# The 3-D viewer of the HTML page, bundled from the pinned npm packages of massmodel/page/js (needs node and npm;
# without them the page says it has no 3-D view).
$(VIEWER): $(VIEWER_SRC)/viewer.js $(VIEWER_SRC)/package.json $(VIEWER_SRC)/package-lock.json
	@if command -v npm >/dev/null 2>&1; then \
	  cd $(VIEWER_SRC) && npm ci --no-audit --no-fund --ignore-scripts --loglevel=error && npm run --silent build; \
	else echo "npm not found: the HTML page will have no 3-D view (install node and npm, then run make viewer)"; fi

viewer: $(VIEWER)

venv: $(STAMP) $(VIEWER)

test: venv
	$(PY) -m pytest -q -p no:cacheprovider

demo: venv
	bash parts_demo/run_demo.sh

# every benchmark runs; the target exits non-zero at the end when any of them missed a target (exit 1)
bench: venv
	status=0; for b in benchmarks/bench_*.py; do $(PY) $$b || status=1; done; exit $$status

lint: venv
	$(VENV)/bin/ruff check massmodel tests benchmarks

clean:
	rm -rf exports/demo $(VIEWER_SRC)/node_modules $(VIEWER)
