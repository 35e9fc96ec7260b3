"""The three jobs: estimate (a study), check (a claim), batch (many loci).

Each job takes validated input from files/ and returns a typed result that reporting/
renders; the jobs never import one another.
"""
