"""Launch antiphon for both arms of a cell (one node per arm, no messages between them).

    ros2 launch launch/dual_arm.launch.py params_file:=config/demo_cell.yaml \
        left_wrench_topic:=/left/ft_sensor/wrench right_wrench_topic:=/right/ft_sensor/wrench

Each arm's motion stack subscribes to /<arm>/antiphon/recommended_twist.
SAFETY: the watchdog is not a safety-rated function; see SAFETY.md.
"""
import os
import sys

from launch import LaunchDescription
from launch.actions import DeclareLaunchArgument
from launch.substitutions import LaunchConfiguration

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from antiphon_launch_common import REPO, arm_arguments, arm_process  # noqa: E402


def generate_launch_description():
    params = LaunchConfiguration('params_file')
    return LaunchDescription([
        DeclareLaunchArgument('params_file', default_value=os.path.join(REPO, 'config', 'demo_cell.yaml')),
        DeclareLaunchArgument('use_sim_time', default_value='false'),
        *arm_arguments('left', 'left_'),
        *arm_arguments('right', 'right_'),
        arm_process('left', params, 'left_'),
        arm_process('right', params, 'right_'),
    ])
