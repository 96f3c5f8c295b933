def read_population(path, mapping=None):
    raise NotImplementedError
