"""Evaluate one of antiphon's launch files with a minimal stand-in for `launch` and `launch_ros`
(ROS 2 cannot be installed here), and print, as JSON, the processes it would start with the
command line launch_ros's Node builds (executable, arguments, then --ros-args with the
namespace, the parameters file it writes, and the remappings).

usage: run_launch.py <launch file> <share dir> [name:=value ...]
"""
import importlib.util
import json
import os
import sys
import tempfile
import types

SHARE = sys.argv[2]


def perform(x, ctx):
    if isinstance(x, str):
        return x
    if isinstance(x, (list, tuple)):
        return ''.join(perform(i, ctx) for i in x)
    return x.perform(ctx)


class LaunchConfiguration:
    def __init__(self, name):
        self.name = name

    def perform(self, ctx):
        return ctx.launch_configurations[self.name]


class PathJoinSubstitution:
    def __init__(self, parts):
        self.parts = parts

    def perform(self, ctx):
        return os.path.join(*[perform(p, ctx) for p in self.parts])


class PythonExpression:
    def __init__(self, expr):
        self.expr = expr

    def perform(self, ctx):
        return str(eval(perform(self.expr, ctx)))


class FindPackageShare:
    def __init__(self, pkg):
        self.pkg = pkg

    def perform(self, ctx):
        return SHARE


class DeclareLaunchArgument:
    def __init__(self, name, default_value=None, description='', choices=None):
        self.name, self.default_value, self.description, self.choices = name, default_value, description, choices


class OpaqueFunction:
    def __init__(self, function):
        self.function = function


class LaunchDescription:
    def __init__(self, entities):
        self.entities = entities


class Node:
    def __init__(self, **kw):
        self.kw = kw


def module(name, **attrs):
    m = types.ModuleType(name)
    m.__dict__.update(attrs)
    sys.modules[name] = m
    return m


module('launch', LaunchDescription=LaunchDescription)
module('launch.actions', DeclareLaunchArgument=DeclareLaunchArgument, OpaqueFunction=OpaqueFunction)
module('launch.substitutions', LaunchConfiguration=LaunchConfiguration, PathJoinSubstitution=PathJoinSubstitution,
       PythonExpression=PythonExpression)
module('launch_ros')
module('launch_ros.actions', Node=Node)
module('launch_ros.substitutions', FindPackageShare=FindPackageShare)

spec = importlib.util.spec_from_file_location('launch_file', sys.argv[1])
mod = importlib.util.module_from_spec(spec)
spec.loader.exec_module(mod)
ld = mod.generate_launch_description()

given = dict(a.split(':=', 1) for a in sys.argv[3:])
ctx = types.SimpleNamespace(launch_configurations={})
declared = []
out = {'arguments': [], 'processes': []}
for e in ld.entities:
    if isinstance(e, DeclareLaunchArgument):
        declared.append(e.name)
        out['arguments'].append({'name': e.name, 'choices': e.choices})
        if e.name in given:
            v = given[e.name]
            if e.choices is not None and v not in e.choices:
                print(json.dumps({'error': f"argument '{e.name}' must be one of {e.choices}, got '{v}'"}))
                sys.exit(0)
        else:
            v = perform(e.default_value, ctx)
        ctx.launch_configurations[e.name] = v
    elif isinstance(e, OpaqueFunction):
        for n in e.function(ctx):
            kw = n.kw
            cmd = [kw['executable'], *kw.get('arguments', []), '--ros-args', *kw.get('ros_arguments', [])]
            if kw.get('namespace'):
                cmd += ['-r', '__ns:=' + kw['namespace']]
            for p in kw.get('parameters', []):
                f = tempfile.NamedTemporaryFile('w', suffix='.yaml', delete=False)
                f.write('/**:\n  ros__parameters:\n' + ''.join(f'    {k}: {json.dumps(v)}\n' for k, v in p.items()))
                f.close()
                cmd += ['--params-file', f.name]
            for a, b in kw.get('remappings', []):
                cmd += ['-r', f'{a}:={b}']
            out['processes'].append({'package': kw['package'], 'executable': kw['executable'], 'name': kw.get('name'),
                                     'namespace': kw.get('namespace'), 'cmd': cmd, 'env': kw.get('additional_env', {})})
unknown = [k for k in given if k not in declared]
if unknown:
    out['error'] = f'unknown launch arguments {unknown}'
print(json.dumps(out))
