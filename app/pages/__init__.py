"""The dashboard's pages: each module registers its page, builds ``layout()`` and owns its callbacks."""
