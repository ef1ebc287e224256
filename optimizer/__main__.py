"""``python -m strainline.optimizer`` runs the command line."""
from strainline.optimizer.cli.main import main

raise SystemExit(main())
