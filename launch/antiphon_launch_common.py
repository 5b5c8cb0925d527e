"""Shared pieces of antiphon's launch files (imported by arm.launch.py and dual_arm.launch.py)."""
import os

from launch.actions import DeclareLaunchArgument, ExecuteProcess
from launch.substitutions import LaunchConfiguration

REPO = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


def arm_process(arm, params, prefix=''):
    """The antiphon node of one arm as a process (the node runs on Node.js)."""
    cfg = lambda name: LaunchConfiguration(prefix + name)  # noqa: E731
    return ExecuteProcess(
        name=f'antiphon_{arm}' if isinstance(arm, str) else 'antiphon',
        cmd=[
            'node', os.path.join(REPO, 'dist', 'src', 'cli', 'main.js'), 'node',
            '--arm', arm, '--params', params,
            '--ros-args',
            '-r', ['__ns:=', cfg('namespace')],
            '-r', ['wrench:=', cfg('wrench_topic')],
            '-r', ['joint_states:=', cfg('joint_states_topic')],
            '-r', ['tool_pose:=', cfg('tool_pose_topic')],
            '-r', ['zone_view:=', cfg('zone_view_topic')],
            '-p', ['use_sim_time:=', LaunchConfiguration('use_sim_time')],
        ],
        output='screen',
        sigterm_timeout='5',
    )


def arm_arguments(arm, prefix=''):
    return [
        DeclareLaunchArgument(prefix + 'namespace', default_value=f'/{arm}', description='namespace of this arm'),
        DeclareLaunchArgument(prefix + 'wrench_topic', default_value=f'/{arm}/wrench', description='geometry_msgs/WrenchStamped from the wrist sensor'),
        DeclareLaunchArgument(prefix + 'joint_states_topic', default_value=f'/{arm}/joint_states', description='sensor_msgs/JointState from the arm driver'),
        DeclareLaunchArgument(prefix + 'tool_pose_topic', default_value=f'/{arm}/tool_pose', description='geometry_msgs/PoseStamped of the tool in the cell frame'),
        DeclareLaunchArgument(prefix + 'zone_view_topic', default_value=f'/{arm}/zone_view', description='antiphon/ZoneView from this arm\'s area sensor'),
    ]
