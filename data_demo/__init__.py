"""The invented scenarios run by ``qhat demo``, installed as the package ``infer.data_demo``.

This folder holds data only (studies, claims and loci, all fictional); the module exists
so that ``importlib.resources.files("infer.data_demo")`` finds it in every kind of install.
"""
