"""Launch antiphon for both arms of a cell (one process per arm, each with its two nodes).

    ros2 launch antiphon dual_arm.launch.py params_file:=/path/to/cell.yaml \
        left_wrench_topic:=/left/ft_sensor/wrench right_wrench_topic:=/right/ft_sensor/wrench

Each arm's motion stack subscribes to /<arm>/antiphon/recommended_twist (reliable). With
watchdog.hold_link.enabled each arm listens to the other's antiphon/held.
SAFETY: the watchdog is not a safety-rated function; see SAFETY.md.
"""
import os
import sys

from launch import LaunchDescription
from launch.actions import OpaqueFunction

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from antiphon_launch_common import arm_arguments, arm_node, common_arguments  # noqa: E402


def generate_launch_description():
    return LaunchDescription([
        *common_arguments(),
        *arm_arguments('left', 'left_'),
        *arm_arguments('right', 'right_'),
        OpaqueFunction(function=lambda context: [arm_node(context, 'left', 'left_'), arm_node(context, 'right', 'right_')]),
    ])
