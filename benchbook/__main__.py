from benchbook.cli import main

raise SystemExit(main())
