"""The static site: the verified catalogue as typed records (records), pages of each kind (pages), exports, written in one step (build)."""
