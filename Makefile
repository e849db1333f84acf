.PHONY: start test bench

# Set up and start the app on SQLite with the demo data.
start:
	scripts/start.sh

# Set up and run every test.
test:
	scripts/test.sh

# Print the engine's speed figures.
bench:
	scripts/bootstrap.sh test
	.venv/bin/python benchmarks/engine.py
	.venv/bin/python benchmarks/far_field.py
	.venv/bin/python benchmarks/pdf_record.py
	.venv/bin/python benchmarks/placement.py
	.venv/bin/python benchmarks/section_save.py
	.venv/bin/python benchmarks/lists.py
