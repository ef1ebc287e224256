"""``python -m strainline.optimizer`` runs the command line."""
from strainline.optimizer.cli import main

raise SystemExit(main())
