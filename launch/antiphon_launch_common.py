"""Shared pieces of antiphon's launch files (imported by arm.launch.py and dual_arm.launch.py).

Every default comes from launch substitutions of the arguments (the arm's namespace and topics
follow `arm`), nothing from the environment. The node is the ROS 2 executable
`lib/antiphon/antiphon_node` started with launch_ros Node: namespace, remappings and
parameters as for any ROS 2 node. It holds two nodes (antiphon_roles and the lifecycle node
antiphon), so no `name` is given: a node-name remap would rename both.
"""
from launch.actions import DeclareLaunchArgument
from launch.substitutions import LaunchConfiguration, PathJoinSubstitution, PythonExpression
from launch_ros.actions import Node
from launch_ros.substitutions import FindPackageShare

ARMS = ['left', 'right']
INPUTS = ['wrench', 'joint_states', 'tool_pose', 'zone_view']
BOOL = ['true', 'false']


def common_arguments():
    """Arguments shared by both launch files."""
    return [
        DeclareLaunchArgument(
            'params_file',
            default_value=PathJoinSubstitution([FindPackageShare('antiphon'), 'config', 'demo_cell.yaml']),
            description='antiphon parameters file (ROS 2 format; the node reads it with its own loader)'),
        DeclareLaunchArgument('use_sim_time', default_value='false', choices=BOOL,
                              description='follow /clock (play bags with ros2 bag play --clock 1000)'),
        DeclareLaunchArgument('autostart', default_value='false', choices=BOOL,
                              description='drive the lifecycle node to active by itself; false: the '
                                          'cell bringup drives ros2 lifecycle set'),
        DeclareLaunchArgument('use_security', default_value='false', choices=BOOL,
                              description='SROS2: ROS_SECURITY_ENABLE=true, strategy Enforce, '
                                          'enclave /antiphon/<arm>'),
        DeclareLaunchArgument('keystore', default_value='',
                              description='SROS2 keystore (ROS_SECURITY_KEYSTORE); empty: the environment\'s'),
    ]


def partner_of(arm):
    """The other arm, as a substitution."""
    return PythonExpression(["'right' if '", arm, "' == 'left' else 'left'"])


def arm_arguments(arm, prefix=''):
    """Namespace and input topics of one arm; defaults built from `arm` (a name or a substitution)."""
    return [
        DeclareLaunchArgument(prefix + 'namespace', default_value=['/', arm], description='namespace of this arm'),
        DeclareLaunchArgument(prefix + 'wrench_topic', default_value=['/', arm, '/wrench'],
                              description='geometry_msgs/WrenchStamped from the wrist sensor'),
        DeclareLaunchArgument(prefix + 'joint_states_topic', default_value=['/', arm, '/joint_states'],
                              description='sensor_msgs/JointState (a shared /joint_states works: '
                                          'set ros.joint_names)'),
        DeclareLaunchArgument(prefix + 'tool_pose_topic', default_value=['/', arm, '/tool_pose'],
                              description='geometry_msgs/PoseStamped of the tool in the cell frame'),
        DeclareLaunchArgument(prefix + 'zone_view_topic', default_value=['/', arm, '/zone_view'],
                              description='antiphon/ZoneView from this arm\'s area sensor'),
        DeclareLaunchArgument(prefix + 'partner_held_topic', default_value=['/', partner_of(arm), '/antiphon/held'],
                              description='the partner\'s antiphon/held (used with watchdog.hold_link.enabled)'),
    ]


def arm_node(context, arm, prefix=''):
    """The antiphon executable of one arm (call from an OpaqueFunction)."""
    def cfg(name):
        return LaunchConfiguration(prefix + name).perform(context)

    def glob(name):
        return LaunchConfiguration(name).perform(context)

    arm = arm if isinstance(arm, str) else arm.perform(context)
    if arm not in ARMS:
        raise RuntimeError(f"arm must be one of {ARMS}, got '{arm}'")
    arguments = ['--arm', arm, '--params', glob('params_file')]
    if glob('autostart') == 'true':
        arguments.append('--autostart')
    ros_arguments = []
    env = {}
    if glob('use_security') == 'true':
        ros_arguments += ['--enclave', f'/antiphon/{arm}']
        env = {'ROS_SECURITY_ENABLE': 'true', 'ROS_SECURITY_STRATEGY': 'Enforce'}
        if glob('keystore'):
            env['ROS_SECURITY_KEYSTORE'] = glob('keystore')
    remappings = [(k, cfg(k + '_topic')) for k in INPUTS] + [('partner_held', cfg('partner_held_topic'))]
    return Node(
        package='antiphon',
        executable='antiphon_node',
        namespace=cfg('namespace'),
        arguments=arguments,
        remappings=remappings,
        parameters=[{'use_sim_time': glob('use_sim_time') == 'true'}],
        ros_arguments=ros_arguments,
        additional_env=env,
        output='screen',
        sigterm_timeout='5',
    )
