"""Never finishes being imported."""
while True:
    pass
