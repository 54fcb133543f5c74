from winder.cli import main

raise SystemExit(main())
