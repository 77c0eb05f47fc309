"""Development tools kept out of the product package: the fleet-scale benchmark and the icon drawing script."""
