from verify.cli import main

raise SystemExit(main())
