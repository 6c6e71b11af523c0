"""Allow `python -m sheettool`."""

from sheettool.cli.main import main

raise SystemExit(main())
