"""Launch antiphon for one arm beside the arm's existing driver.

    ros2 launch antiphon arm.launch.py arm:=right params_file:=/path/to/cell.yaml \
        wrench_topic:=/right/ft_sensor/wrench

The namespace and every input topic default from `arm` (/right, /right/wrench, ...); outputs
appear under /<arm>/antiphon/ (recommended_twist, role, belief, watchdog, correction_wrench,
impact_wrench, held, markers). The lifecycle node /<arm>/antiphon starts unconfigured: drive it
with `ros2 lifecycle set /<arm>/antiphon configure` and `activate`, or pass autostart:=true.
SAFETY: the watchdog is not a safety-rated function; see SAFETY.md.
"""
import os
import sys

from launch import LaunchDescription
from launch.actions import DeclareLaunchArgument, OpaqueFunction
from launch.substitutions import LaunchConfiguration

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from antiphon_launch_common import ARMS, arm_arguments, arm_node, common_arguments  # noqa: E402


def generate_launch_description():
    arm = LaunchConfiguration('arm')
    return LaunchDescription([
        DeclareLaunchArgument('arm', default_value='left', choices=ARMS, description='left or right'),
        *common_arguments(),
        *arm_arguments(arm),
        OpaqueFunction(function=lambda context: [arm_node(context, arm)]),
    ])
