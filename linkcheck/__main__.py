from linkcheck.cli import main

raise SystemExit(main())
