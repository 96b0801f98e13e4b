// A 2 x 1 plate with a notch, our own test geometry; the sides are
// physical groups named after where they are.
h = 0.25;
Point(1) = {0, 0, 0, h};
Point(2) = {2, 0, 0, h};
Point(3) = {2, 1, 0, h};
Point(4) = {1.2, 1, 0, h};
Point(5) = {1, 0.7, 0, h};
Point(6) = {0.8, 1, 0, h};
Point(7) = {0, 1, 0, h};
Line(1) = {1, 2};
Line(2) = {2, 3};
Line(3) = {3, 4};
Line(4) = {4, 5};
Line(5) = {5, 6};
Line(6) = {6, 7};
Line(7) = {7, 1};
Curve Loop(1) = {1, 2, 3, 4, 5, 6, 7};
Plane Surface(1) = {1};
Physical Curve("bottom") = {1};
Physical Curve("right") = {2};
Physical Curve("top") = {3, 6};
Physical Curve("notch") = {4, 5};
Physical Curve("left") = {7};
Physical Surface("plate") = {1};
