"""The estimate job: a study in, a typed result out."""
