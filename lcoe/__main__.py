from lcoe.cli import main

raise SystemExit(main())
