from ascentplan.cli import main

raise SystemExit(main())
