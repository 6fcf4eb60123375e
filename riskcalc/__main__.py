"""``python -m riskcalc``: the same command line as the installed ``riskcalc`` script."""

from .cli import main

if __name__ == "__main__":
    main()
