from fabric2seis.cli import main

raise SystemExit(main())
