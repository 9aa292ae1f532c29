from reviewapp.cli import main

raise SystemExit(main())
