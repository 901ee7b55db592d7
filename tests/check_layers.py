#!/usr/bin/env python3
"""Refuses an #include that points upward in covey's layer graph.

Usage: check_layers.py SOURCE_DIR LAYERS_TXT

LAYERS_TXT is written by cmake/CoveyLayers.cmake: one line per layer, "name folder deps...".
A file of layer L (a source or private header in L's folder, or a public header under
include/covey/L/) may include covey headers of L itself and of the layers L reaches through its
dependencies, nothing else. Public headers may not include private ones ("core/h5.hpp" and the
like), since those are not installed. Prints one line per violation and exits 1 if any.
"""
import os
import re
import sys

INCLUDE = re.compile(r'^\s*#\s*include\s+"([^"]+)"', re.M)


def read_layers(path):
    layers = {}
    for line in open(path):
        if line.startswith('#') or not line.strip():
            continue
        name, folder, *deps = line.split()
        layers[name] = (folder, deps)
    return layers


def reachable(layers, name):
    seen, todo = {name}, [name]
    while todo:
        for dep in layers[todo.pop()][1]:
            if dep not in seen:
                seen.add(dep)
                todo.append(dep)
    return seen


def included_layer(include, layers, private_roots):
    """The layer an include belongs to, or None for one outside covey's layers."""
    parts = include.split('/')
    if parts[0] == 'covey' and len(parts) == 3 and parts[1] in layers:
        return parts[1], False
    if parts[0] in private_roots:
        return private_roots[parts[0]], True
    return None, False


def main(source_dir, layers_txt):
    layers = read_layers(layers_txt)
    # private headers shared between layers are included as "<folder basename>/x.hpp"
    private_roots = {os.path.basename(folder): name for name, (folder, _) in layers.items()}
    problems = []
    checked = 0
    for name, (folder, _) in layers.items():
        allowed = reachable(layers, name)
        places = [(os.path.join(source_dir, folder), False),
                  (os.path.join(source_dir, 'include', 'covey', name), True)]
        for place, public in places:
            for entry in sorted(os.listdir(place)):
                if not entry.endswith(('.cpp', '.hpp')):
                    continue
                path = os.path.join(place, entry)
                checked += 1
                for include in INCLUDE.findall(open(path, encoding='utf-8').read()):
                    layer, private = included_layer(include, layers, private_roots)
                    rel = os.path.relpath(path, source_dir)
                    if layer is None:
                        if include.startswith('covey/') and include != 'covey/covey.hpp':
                            problems.append(f'{rel}: "{include}" is in no layer')
                        continue
                    if layer not in allowed:
                        problems.append(f'{rel}: includes "{include}" of layer {layer}, '
                                        f'which {name} does not depend on')
                    elif public and private:
                        problems.append(f'{rel}: public header includes private "{include}"')
    for p in problems:
        print(p)
    print(f'{checked} files checked, {len(problems)} upward or private includes')
    return 1 if problems else 0


if __name__ == '__main__':
    sys.exit(main(sys.argv[1], sys.argv[2]))
